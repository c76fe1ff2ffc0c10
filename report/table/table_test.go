package table

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// randomCrests makes a crest table with values spread over the ranges a
// field record gives (positions to hundreds of metres, times since 1970),
// unknown values, and rows of a track together.
func randomCrests(rng *rand.Rand, n int) *Table {
	t := New(Crests, n)
	id := 1
	for i := 0; i < n; i++ {
		if rng.IntN(8) == 0 {
			id++
		}
		for k, c := range Crests.Columns {
			var v float64
			switch c.Kind {
			case Count:
				v = float64(rng.IntN(100000))
			case Flag:
				v = float64(rng.IntN(2))
			default:
				v = (rng.Float64() - 0.3) * math.Pow(10, float64(rng.IntN(5)-2))
				if rng.IntN(10) == 0 && !c.Required {
					v = math.NaN()
				}
			}
			t.Cols[k][i] = v
		}
		t.Cols[CrestTrack][i] = float64(id)
		t.Cols[CrestTime][i] = 1.78e9 + float64(i)*0.1 + 1e-7*rng.Float64()
	}
	return t
}

// Writing a table rounds every value to its column's precision, and
// reading then writing it again is lossless: the same bytes, the same
// float64 values, equal to Table.Round of the original. Each written
// value is within half a unit of its last digit of the original (the
// rounding the stated precision allows).
func TestRoundTripLossless(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	orig := randomCrests(rng, 3000)
	var a bytes.Buffer
	if err := orig.Write(&a); err != nil {
		t.Fatal(err)
	}
	back, err := Read(bytes.NewReader(a.Bytes()), Crests, "crests.csv")
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := back.Write(&b); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a.Bytes(), b.Bytes()) {
		t.Fatal("reading and writing crests.csv again changed the file")
	}
	rounded := &Table{Schema: Crests, Cols: make([][]float64, len(orig.Cols))}
	for k := range orig.Cols {
		rounded.Cols[k] = append([]float64(nil), orig.Cols[k]...)
	}
	rounded.Round()
	for k, c := range Crests.Columns {
		for i := range orig.Cols[k] {
			o, r, got := orig.Cols[k][i], rounded.Cols[k][i], back.Cols[k][i]
			if !(got == r || math.IsNaN(got) && math.IsNaN(r)) {
				t.Fatalf("%s row %d: read back %v, Round gives %v", c.Name, i, got, r)
			}
			if math.IsNaN(o) {
				continue
			}
			half := 0.5 * math.Pow(10, -float64(c.Prec.Decimals))
			if c.Prec.Sig > 0 {
				half = 0.5 * math.Pow(10, math.Floor(math.Log10(math.Abs(o)))-float64(c.Prec.Sig-1))
			}
			if c.Kind == Number && math.Abs(got-o) > half*(1+1e-9) {
				t.Fatalf("%s row %d: %v written as %v, more than half a unit of the last digit (%g) away", c.Name, i, o, got, half)
			}
		}
	}
}

// The crests.csv of a deployment is written with the stated precision:
// times to 1 µs, positions to 1 mm, elevations to 0.1 mm, speeds to 1
// mm/s, ratios to 4 significant digits, and never "-0".
func TestPrecisionAsStated(t *testing.T) {
	cases := []struct {
		col  string
		v    float64
		want string
	}{
		{"time_s", 1781234567.1234567, "1781234567.123457"},
		{"time_s", 12.5, "12.5"},
		{"x_m", 12.34567, "12.346"},
		{"x_m", -0.0004, "0"},
		{"crest_elevation_m", 0.123456, "0.1235"},
		{"crest_speed_mps", 7.89049, "7.89"},
		{"ratio_peak", 0.812345, "0.8123"},
		{"ratio_peak", 1.23456, "1.235"},
		{"ratio_peak", -2.5e-7, "-2.5e-07"},
		{"steepness_sc", 0.0712345, "0.07123"},
		{"track_id", 42, "42"},
		{"foam", 1, "1"},
		{"bx", math.NaN(), ""},
		{"bx", math.Inf(1), ""},
	}
	for _, c := range cases {
		col := &Crests.Columns[Crests.Index(c.col)]
		if got := string(col.Append(nil, c.v)); got != c.want {
			t.Errorf("%s %v written %q, want %q", c.col, c.v, got, c.want)
		}
	}
}

// A truncated or inconsistent crests.csv is refused with one sentence
// naming the file and what is wrong: cut in the middle of a line, a short
// row, a field that is not a number.
func TestReadRefusesDamage(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	var buf bytes.Buffer
	if err := randomCrests(rng, 50).Write(&buf); err != nil {
		t.Fatal(err)
	}
	good := buf.String()
	lines := strings.SplitAfter(good, "\n")
	cases := []struct{ name, text, want string }{
		{"cut mid-line", good[:len(good)/2], "ends in the middle of a line"},
		{"last newline lost", strings.TrimSuffix(good, "\n"), "ends in the middle of a line"},
		{"short row", strings.Join(lines[:5], "") + "1,2,3\n" + strings.Join(lines[5:], ""), "line 6 has 3 fields but its header has 20 columns"},
		{"not a number", strings.Replace(good, lines[3], strings.Replace(lines[3], ",", ",fast,", 1)[:len(lines[3])-1]+"\n", 1), "line 4"},
		{"stray quote", strings.Join(lines[:2], "") + `1,"2` + "\n" + strings.Join(lines[2:], ""), "stray quote"},
		{"empty", "", "is empty"},
		{"header only", lines[0], "has a header but no crest rows"},
		{"missing column", strings.Replace(good, ",ratio_local", "", 1), "lacks the column(s) ratio_local"},
	}
	for _, c := range cases {
		_, err := Read(strings.NewReader(c.text), Crests, "crests.csv")
		var te *Error
		if !errors.As(err, &te) {
			t.Errorf("%s: error %v is not a *table.Error", c.name, err)
			continue
		}
		msg := err.Error()
		if !strings.Contains(msg, c.want) || !strings.HasPrefix(msg, "crests.csv") {
			t.Errorf("%s: %q does not name crests.csv and say %q", c.name, msg, c.want)
		}
		if strings.Contains(msg, "\n") || strings.Count(msg, ". ") > 0 || strings.Contains(msg, "crestspeed ") {
			t.Errorf("%s: not one sentence free of command names: %q", c.name, msg)
		}
		t.Logf("%s → %s", c.name, msg)
	}
	// a missing file wraps os.ErrNotExist
	_, err := ReadFile(filepath.Join(t.TempDir(), "crests.csv"), Crests)
	if !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v does not wrap os.ErrNotExist", err)
	}
}

// Rows out of track order are put in order (stable by time), and a
// table's other checks hold: bins adjoin, coverage frames increase.
func TestChecks(t *testing.T) {
	text := strings.Join(Crests.Names(), ",") + "\n"
	row := func(id, tm int) string {
		f := make([]string, len(Crests.Columns))
		for k := range f {
			f[k] = "0"
		}
		f[CrestTrack], f[CrestTime] = strconv.Itoa(id), strconv.Itoa(tm)
		return strings.Join(f, ",") + "\n"
	}
	text += row(2, 1) + row(1, 2) + row(2, 0) + row(1, 1)
	tab, err := Read(strings.NewReader(text), Crests, "crests.csv")
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for i := 0; i < tab.Len(); i++ {
		got = append(got, strconv.Itoa(int(tab.Cols[CrestTrack][i]))+"@"+strconv.Itoa(int(tab.Cols[CrestTime][i])))
	}
	if strings.Join(got, " ") != "1@1 1@2 2@0 2@1" {
		t.Errorf("rows in order %v, want 1@1 1@2 2@0 2@1", got)
	}
	if r := TrackRuns(tab); len(r) != 3 || r[1] != 2 {
		t.Errorf("track runs %v, want [0 2 4]", r)
	}
	lam := "speed_min_mps,speed_max_mps,lambda_m-2_s,front_samples,front_length_m\n0,0.25,1,1,1\n0.3,0.5,1,1,1\n"
	if _, err := Read(strings.NewReader(lam), Lambda, "lambda.csv"); err == nil || !strings.Contains(err.Error(), "line 3") || !strings.Contains(err.Error(), "bins must adjoin") {
		t.Errorf("lambda gap: %v", err)
	}
	cov := "time_s,frame,coverage,foam_cells,valid_cells,area_m2\n0,1,0.5,1,2,1\n0.1,1,0.5,1,2,1\n"
	if _, err := Read(strings.NewReader(cov), Coverage, "coverage.csv"); err == nil || !strings.Contains(err.Error(), "frames must increase") {
		t.Errorf("coverage frames: %v", err)
	}
	if _, err := Read(strings.NewReader(strings.Replace(cov, ",0.5,", ",1.5,", 1)), Coverage, "coverage.csv"); err == nil || !strings.Contains(err.Error(), "above 1") {
		t.Errorf("coverage above one: %v", err)
	}
}

// FuzzReadCrests feeds the crest-table reader arbitrary files: it never
// panics, and what it accepts is a table whose columns have one length,
// whose required fields are finite and whole where they must be, whose
// rows of a track are together, and which writes a file that reads back
// to itself.
func FuzzReadCrests(f *testing.F) {
	var buf bytes.Buffer
	randomCrests(rand.New(rand.NewPCG(5, 6)), 6).Write(&buf)
	f.Add(buf.Bytes())
	f.Add([]byte(strings.Join(Crests.Names(), ",") + "\n"))
	f.Add([]byte("\ufeff" + strings.Join(Crests.Names(), ",") + ",extra\n" + strings.Repeat("1,", 20) + "x\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		tab, err := Read(bytes.NewReader(data), Crests, "crests.csv")
		if err != nil {
			var te *Error
			if !errors.As(err, &te) {
				t.Fatalf("error %v is not a *table.Error", err)
			}
			return
		}
		n := tab.Len()
		for k, c := range Crests.Columns {
			if len(tab.Cols[k]) != n {
				t.Fatalf("column %s has %d values, the table %d rows", c.Name, len(tab.Cols[k]), n)
			}
			for _, v := range tab.Cols[k] {
				if (c.Required || c.Kind != Number) && (math.IsNaN(v) || math.IsInf(v, 0)) {
					t.Fatalf("required column %s holds %v", c.Name, v)
				}
				if c.Kind == Count && v != math.Trunc(v) {
					t.Fatalf("count column %s holds %v", c.Name, v)
				}
			}
		}
		seen := map[float64]bool{}
		for i, id := range tab.Cols[CrestTrack] {
			if i > 0 && id != tab.Cols[CrestTrack][i-1] && seen[id] {
				t.Fatalf("rows of track %v are not together", id)
			}
			seen[id] = true
		}
		var a, b bytes.Buffer
		if err := tab.Write(&a); err != nil {
			t.Fatal(err)
		}
		back, err := Read(bytes.NewReader(a.Bytes()), Crests, "crests.csv")
		if err != nil {
			t.Fatalf("a table written by Write does not read back: %v", err)
		}
		if err := back.Write(&b); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a.Bytes(), b.Bytes()) {
			t.Fatal("writing, reading and writing again changed the file")
		}
	})
}

// A table written in blocks (BlockWriter) is the file Write makes of the
// whole table; with no block at all, the header alone.
func TestBlockWriterMatchesWrite(t *testing.T) {
	whole := New(Spectrum, 7)
	for i := 0; i < 7; i++ {
		whole.Cols[0][i], whole.Cols[1][i] = 0.01*float64(i+1), math.Pow(10, -float64(i))
	}
	var want bytes.Buffer
	if err := whole.Write(&want); err != nil {
		t.Fatal(err)
	}
	var got bytes.Buffer
	bw := NewBlockWriter(&got, Spectrum)
	for _, r := range [][2]int{{0, 3}, {3, 3}, {3, 7}} {
		b := New(Spectrum, r[1]-r[0])
		copy(b.Cols[0], whole.Cols[0][r[0]:r[1]])
		copy(b.Cols[1], whole.Cols[1][r[0]:r[1]])
		if err := bw.Write(b); err != nil {
			t.Fatal(err)
		}
	}
	if err := bw.Close(); err != nil {
		t.Fatal(err)
	}
	if got.String() != want.String() {
		t.Errorf("blocks wrote\n%s\nthe whole table\n%s", got.String(), want.String())
	}
	var empty bytes.Buffer
	bw = NewBlockWriter(&empty, Spectrum)
	if err := bw.Close(); err != nil || empty.String() != strings.Join(Spectrum.Names(), ",")+"\n" {
		t.Errorf("no block: %q, %v", empty.String(), err)
	}
	if err := NewBlockWriter(&empty, Spectrum).Write(New(Crests, 0)); err == nil {
		t.Error("a block of another schema was accepted")
	}
}
