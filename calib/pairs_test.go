package calib

import (
	"testing"
)

// Pairing rules of the calibrate command: by the number in the file
// names when every name has one, else by sorted order.
func TestPairFilesByNumber(t *testing.T) {
	// The opencv-doc naming, pair 10 absent on both sides.
	var left, right []string
	for _, n := range []string{"01", "02", "03", "09", "11", "12", "13", "14"} {
		left = append(left, "d/left"+n+".jpg")
		right = append(right, "d/right"+n+".jpg")
	}
	// Given out of order on the right: numbers, not positions, pair them.
	right[0], right[5] = right[5], right[0]
	pairs, err := PairFiles(left, right)
	if err != nil {
		t.Fatal(err)
	}
	if len(pairs) != 8 {
		t.Fatalf("%d pairs, want 8", len(pairs))
	}
	for _, p := range pairs {
		ln, _ := fileNumber(p.Left)
		rn, _ := fileNumber(p.Right)
		if ln != rn || p.Name == "" {
			t.Errorf("pair %+v joins different numbers", p)
		}
	}
	if pairs[3].Name != "9" || pairs[4].Name != "11" {
		t.Errorf("pairs not in number order: %+v", pairs)
	}
}

func TestPairFilesUnmatched(t *testing.T) {
	_, err := PairFiles(
		[]string{"cam0_0001.png", "cam0_0002.png", "cam0_0003.png"},
		[]string{"cam1_0001.png", "cam1_0003.png", "cam1_0004.png"})
	oneSentence(t, err, "cam0_0002.png", "cam1_0004.png")
	t.Log(err)
	// No numbers and different counts: the extra files are named.
	_, err = PairFiles([]string{"a.png", "b.png", "c.png"}, []string{"x.png", "y.png"})
	oneSentence(t, err, "3 left and 2 right", "c.png")
	t.Log(err)
}

func TestPairFilesSortedOrder(t *testing.T) {
	// A name without a number forces sorted order.
	pairs, err := PairFiles([]string{"L/b.png", "L/a.png"}, []string{"R/first.png", "R/second.png"})
	if err != nil {
		t.Fatal(err)
	}
	if pairs[0].Left != "L/a.png" || pairs[0].Right != "R/first.png" || pairs[1].Left != "L/b.png" || pairs[1].Right != "R/second.png" {
		t.Errorf("sorted pairing wrong: %+v", pairs)
	}
}

func TestPairGlobsErrors(t *testing.T) {
	dir := t.TempDir()
	_, err := PairGlobs(dir+"/left*.png", dir+"/right*.png")
	oneSentence(t, err, "matches no file")
	_, err = PairGlobs("", dir+"/right*.png")
	oneSentence(t, err, "--left")
	_, err = PairGlobs(dir+"/[", dir+"/right*.png")
	oneSentence(t, err, "not a valid glob")
}
