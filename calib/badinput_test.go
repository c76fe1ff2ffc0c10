package calib

import (
	"context"
	"image"
	"image/png"
	"os"
	"path/filepath"
	"testing"
)

func writeGrey(t *testing.T, path string, w, h int, level uint8) {
	t.Helper()
	img := image.NewGray(image.Rect(0, 0, w, h))
	for i := range img.Pix {
		img.Pix[i] = level
	}
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := png.Encode(f, img); err != nil {
		t.Fatal(err)
	}
}

func copyFile(t *testing.T, src, dst string) {
	t.Helper()
	data, err := os.ReadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(dst, data, 0o644); err != nil {
		t.Fatal(err)
	}
}

var badOpts = Options{Pattern: docPattern, DropFactor: DefaultDropFactor}

func TestBadInputCountMismatch(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{"01", "02", "03"} {
		copyFile(t, opencvDocData+"left"+n+".jpg", filepath.Join(dir, "left"+n+".jpg"))
	}
	for _, n := range []string{"01", "02"} {
		copyFile(t, opencvDocData+"right"+n+".jpg", filepath.Join(dir, "right"+n+".jpg"))
	}
	_, err := PairGlobs(filepath.Join(dir, "left*.jpg"), filepath.Join(dir, "right*.jpg"))
	oneSentence(t, err, "left03.jpg", "no partner")
	t.Log(err)
}

func TestBadInputDifferentSizes(t *testing.T) {
	dir := t.TempDir()
	var pairs []Pair
	for i, n := range []string{"01", "02"} {
		l, r := filepath.Join(dir, "left"+n+".jpg"), filepath.Join(dir, "right"+n+".png")
		copyFile(t, opencvDocData+"left"+n+".jpg", l)
		if i == 1 {
			writeGrey(t, r, 320, 240, 128) // a different camera
		} else {
			copyFile(t, opencvDocData+"right"+n+".jpg", r)
		}
		pairs = append(pairs, Pair{Name: n, Left: l, Right: r})
	}
	_, err := Calibrate(context.Background(), pairs, badOpts)
	oneSentence(t, err, "right02.png", "320×240", "640×480")
	t.Log(err)
}

func TestBadInputNoPattern(t *testing.T) {
	dir := t.TempDir()
	var pairs []Pair
	for i := 0; i < 3; i++ {
		l, r := filepath.Join(dir, "l"+string(rune('a'+i))+".png"), filepath.Join(dir, "r"+string(rune('a'+i))+".png")
		writeGrey(t, l, 640, 480, uint8(60+40*i))
		writeGrey(t, r, 640, 480, uint8(60+40*i))
		pairs = append(pairs, Pair{Name: string(rune('a' + i)), Left: l, Right: r})
	}
	_, err := Calibrate(context.Background(), pairs, badOpts)
	oneSentence(t, err, "no 9x6 chessboard", "3 pairs")
	t.Log(err)
}

func TestBadInputTooFewViews(t *testing.T) {
	var pairs []Pair
	for _, n := range []string{"01", "02", "03"} {
		pairs = append(pairs, Pair{Name: n, Left: opencvDocData + "left" + n + ".jpg", Right: opencvDocData + "right" + n + ".jpg"})
	}
	_, err := Calibrate(context.Background(), pairs, badOpts)
	oneSentence(t, err, "only 3 of 3", "8 needed")
	t.Log(err)
}

func TestBadInputUnreadableImage(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "right01.png")
	if err := os.WriteFile(bad, []byte("not an image"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Calibrate(context.Background(), []Pair{{Name: "1", Left: opencvDocData + "left01.jpg", Right: bad}}, badOpts)
	oneSentence(t, err, "right01.png", "cannot be read")
}

func TestBadOptions(t *testing.T) {
	for _, c := range []struct {
		opt  Options
		want string
	}{
		{Options{Pattern: Pattern{Cols: 9, Rows: 6}}, "square side"},
		{Options{Pattern: Pattern{Cols: 1, Rows: 6, SquareM: 0.1}}, "inner corners"},
		{Options{Pattern: docPattern, Detector: "magic"}, "magic"},
		{Options{Pattern: docPattern, DropFactor: 0.5}, "drop factor"},
		{Options{Pattern: docPattern, MinViews: 2}, "below 3"},
	} {
		oneSentence(t, c.opt.Validate(), c.want)
	}
	for _, s := range []string{"9", "9x", "x6", "0x6", "9*6", "nine by six"} {
		if _, _, err := ParsePattern(s); err == nil {
			t.Errorf("pattern %q accepted", s)
		} else {
			oneSentence(t, err, s)
		}
	}
	if c, r, err := ParsePattern(" 9×6 "); err != nil || c != 9 || r != 6 {
		t.Errorf("ParsePattern(9×6) = %d, %d, %v", c, r, err)
	}
}
