package ingest

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"image/jpeg"
	"image/png"
	"io"
	"maps"
	"math"
	"os"
	"path/filepath"
	"runtime/pprof"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// greyPattern is a deterministic 8-bit test pattern that differs between
// frames, sides and pixels, so that a swapped or shifted image shows.
func greyPattern(w, h, seed int) *image.Gray {
	g := image.NewGray(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			g.Pix[y*g.Stride+x] = uint8((x*7 + y*13 + seed*31 + (x*y)%17) % 256)
		}
	}
	return g
}

func encodePNG(t *testing.T, g *image.Gray) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := png.Encode(&b, g); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// writePNG writes g as a PNG with Go's encoder and returns g.
func writePNG(t *testing.T, path string, g *image.Gray) *image.Gray {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, encodePNG(t, g), 0o644); err != nil {
		t.Fatal(err)
	}
	return g
}

// matEqualsGray reports the first pixel where m differs from g, or "".
func matEqualsGray(m gocv.Mat, g *image.Gray) string {
	b := g.Bounds()
	if m.Type() != gocv.MatTypeCV8UC1 {
		return fmt.Sprintf("type %v, want 8UC1", m.Type())
	}
	if m.Cols() != b.Dx() || m.Rows() != b.Dy() {
		return fmt.Sprintf("size %dx%d, want %dx%d", m.Cols(), m.Rows(), b.Dx(), b.Dy())
	}
	for y := 0; y < b.Dy(); y++ {
		for x := 0; x < b.Dx(); x++ {
			if got, want := m.GetUCharAt(y, x), g.Pix[y*g.Stride+x]; got != want {
				return fmt.Sprintf("pixel (%d,%d) = %d, want %d", x, y, got, want)
			}
		}
	}
	return ""
}

// readAll drains a source, checks that every frame holds two 8-bit grey
// images and closes them.
func readAll(t *testing.T, src StereoSource, each func(f *StereoFrame)) int {
	t.Helper()
	var f StereoFrame
	defer func() {
		release(&f.Left)
		release(&f.Right)
	}()
	n := 0
	for {
		err := src.Next(&f)
		if err == io.EOF {
			return n
		}
		if err != nil {
			t.Fatalf("Next: %v", err)
		}
		if f.Left.Type() != gocv.MatTypeCV8UC1 || f.Right.Type() != gocv.MatTypeCV8UC1 {
			t.Fatalf("frame %d: types %v/%v, want 8-bit grey", f.Index, f.Left.Type(), f.Right.Type())
		}
		if each != nil {
			each(&f)
		}
		n++
	}
}

// checkMats makes the test fail if it leaves OpenCV matrices open. It
// counts through gocv's Mat profile, which exists only when the tests are
// built with -tags matprofile; otherwise it does nothing.
func checkMats(t *testing.T) {
	t.Helper()
	p := pprof.Lookup("gocv.io/x/gocv.Mat")
	if p == nil {
		return
	}
	before := p.Count()
	t.Cleanup(func() {
		if n := p.Count() - before; n != 0 {
			t.Errorf("%d OpenCV matrices left open", n)
		}
	})
}

func msName(side string, ms int) string { return fmt.Sprintf("%s_%09d.png", side, ms) }

// TestPairsRendererLayout reads a record folder in the renderer's layout
// (left_/right_ with milliseconds zero-padded to 9 digits, no timestamps
// file, no FPS) that holds one example of each bad case.
func TestPairsRendererLayout(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	const w, h = 64, 48
	want := map[int][2]*image.Gray{} // ms -> written left, right
	good := []int{0, 100, 200, 300, 1000, 1100}
	for i, ms := range good {
		want[ms] = [2]*image.Gray{
			writePNG(t, filepath.Join(dir, msName("left", ms)), greyPattern(w, h, 2*i)),
			writePNG(t, filepath.Join(dir, msName("right", ms)), greyPattern(w, h, 2*i+1)),
		}
	}
	// Truncated PNG on the left at 400 ms.
	full := encodePNG(t, greyPattern(w, h, 40))
	if err := os.WriteFile(filepath.Join(dir, msName("left", 400)), full[:len(full)/2], 0o644); err != nil {
		t.Fatal(err)
	}
	writePNG(t, filepath.Join(dir, msName("right", 400)), greyPattern(w, h, 41))
	// Wrong-size pair at 500 ms.
	writePNG(t, filepath.Join(dir, msName("left", 500)), greyPattern(w/2, h/2, 50))
	writePNG(t, filepath.Join(dir, msName("right", 500)), greyPattern(w/2, h/2, 51))
	// Missing partner at 600 ms (left only) and 700 ms (right only).
	writePNG(t, filepath.Join(dir, msName("left", 600)), greyPattern(w, h, 60))
	writePNG(t, filepath.Join(dir, msName("right", 700)), greyPattern(w, h, 70))
	// A stray preview image without a number.
	writePNG(t, filepath.Join(dir, "left_preview.png"), greyPattern(w, h, 80))

	src, err := OpenPairs(PairSpec{Dir: dir, ExpectedSize: image.Pt(w, h)})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	// Candidate pairs: the 6 good ones, the truncated and the wrong-size
	// pair (found only when decoded).
	if src.Len() != 8 {
		t.Errorf("Len = %d, want 8", src.Len())
	}
	var times []float64
	n := readAll(t, src, func(f *StereoFrame) {
		times = append(times, f.Time)
		ms := int(math.Round(f.Time * 1000))
		wl, ok := want[ms]
		if !ok {
			t.Errorf("unexpected frame at %g s (%s)", f.Time, f.LeftPath)
			return
		}
		// Check: PNG is lossless (W3C PNG specification), so OpenCV's
		// decoder (libpng) must return exactly what Go's image/png wrote.
		if d := matEqualsGray(f.Left, wl[0]); d != "" {
			t.Errorf("left at %d ms: %s", ms, d)
		}
		if d := matEqualsGray(f.Right, wl[1]); d != "" {
			t.Errorf("right at %d ms: %s", ms, d)
		}
		if filepath.Base(f.LeftPath) != msName("left", ms) || filepath.Base(f.RightPath) != msName("right", ms) {
			t.Errorf("paths %s, %s at %d ms", f.LeftPath, f.RightPath, ms)
		}
	})
	if n != len(good) {
		t.Errorf("delivered %d pairs, want %d", n, len(good))
	}
	// Check: the times are the milliseconds written into the names by this
	// test, divided by 1000, in increasing order.
	for i, ms := range good {
		if i < len(times) && times[i] != float64(ms)/1000 {
			t.Errorf("time %d = %g s, want %g s", i, times[i], float64(ms)/1000)
		}
	}
	// Check: one count per bad case planted above.
	wantSkips := SkipCounts{
		SkipUnreadable: 1,
		SkipWrongSize:  1,
		SkipNoPartner:  2,
		SkipNoNumber:   1,
	}
	if got := src.Skipped(); !maps.Equal(got, wantSkips) {
		t.Errorf("Skipped = %v, want %v", got, wantSkips)
	}
	// Reading again counts nothing twice.
	src.Rewind()
	if n2 := readAll(t, src, nil); n2 != n {
		t.Errorf("after Rewind: %d pairs, want %d", n2, n)
	}
	if got := src.Skipped(); !maps.Equal(got, wantSkips) {
		t.Errorf("Skipped after Rewind = %v, want %v", got, wantSkips)
	}
}

// TestPairsLeftRightSizeMismatch: with no expected size, a pair whose two
// images differ in size is skipped with its own reason.
func TestPairsLeftRightSizeMismatch(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	writePNG(t, filepath.Join(dir, "L", "cam_0001.png"), greyPattern(32, 24, 1))
	writePNG(t, filepath.Join(dir, "R", "cam_0001.png"), greyPattern(32, 24, 2))
	writePNG(t, filepath.Join(dir, "L", "cam_0002.png"), greyPattern(32, 24, 3))
	writePNG(t, filepath.Join(dir, "R", "cam_0002.png"), greyPattern(32, 20, 4))
	src, err := OpenPairs(PairSpec{
		LeftGlob:  filepath.Join(dir, "L", "*.png"),
		RightGlob: filepath.Join(dir, "R", "*.png"),
		FPS:       4,
	})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	var times []float64
	n := readAll(t, src, func(f *StereoFrame) { times = append(times, f.Time) })
	// Check: frame number 1 at 4 Hz is at 1/4 s (time = number / frame rate).
	if n != 1 || times[0] != 0.25 {
		t.Errorf("got %d pairs at %v, want 1 at [0.25]", n, times)
	}
	if got, want := src.Skipped(), (SkipCounts{SkipSizeMismatch: 1}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}
}

// writeTimestamps writes a timestamps file in the renderer's format.
func writeTimestamps(t *testing.T, path string, rows [][4]string) {
	t.Helper()
	var b strings.Builder
	b.WriteString("frame,time_s,left,right\n")
	for _, r := range rows {
		b.WriteString(strings.Join(r[:], ",") + "\n")
	}
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestPairsTimestampsFile: the timestamps file gives pairs and times; rows
// are taken in frame order whatever their order in the file; a time going
// backwards or repeated, a missing partner and a row with no images are
// skipped and counted.
func TestPairsTimestampsFile(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	const w, h = 40, 30
	// Names carry numbers that disagree with the file's times: the file
	// wins.
	name := func(side string, k int) string { return fmt.Sprintf("%s%d.png", side, 100-k) }
	written := map[string]*image.Gray{}
	for k := 0; k <= 8; k++ {
		for j, side := range []string{"a", "b"} {
			if (k == 6 && side == "b") || k == 7 {
				continue // right of frame 6 and both of frame 7 are missing
			}
			written[name(side, k)] = writePNG(t, filepath.Join(dir, "img", name(side, k)), greyPattern(w, h, 2*k+j))
		}
	}
	row := func(k int, ts string) [4]string {
		return [4]string{fmt.Sprint(k), ts, "img/" + name("a", k), "img/" + name("b", k)}
	}
	csvPath := filepath.Join(dir, "times.csv")
	writeTimestamps(t, csvPath, [][4]string{
		row(2, "10.50"),
		row(0, "10.00"),
		row(1, "10.25"),
		row(3, "10.40"), // backwards
		row(4, "10.75"),
		row(4, "10.80"), // frame number repeated
		row(5, "10.75"), // time repeated
		row(6, "11.00"), // right image missing
		row(7, "11.25"), // both images missing
		row(8, "11.50"),
	})
	src, err := OpenPairs(PairSpec{TimestampsFile: csvPath, FPS: 30})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	// Check: the good rows (frames 0, 1, 2, 4, 8) with the times typed in
	// the file above, in frame order.
	wantTimes := []float64{10.00, 10.25, 10.50, 10.75, 11.50}
	wantFrames := []int{0, 1, 2, 4, 8}
	var got []float64
	i := 0
	readAll(t, src, func(f *StereoFrame) {
		got = append(got, f.Time)
		if i < len(wantFrames) && filepath.Base(f.LeftPath) != name("a", wantFrames[i]) {
			t.Errorf("pair %d: left %s, want %s", i, filepath.Base(f.LeftPath), name("a", wantFrames[i]))
		}
		// Check: lossless PNG round trip (W3C PNG specification).
		if d := matEqualsGray(f.Left, written[filepath.Base(f.LeftPath)]); d != "" {
			t.Errorf("left %s: %s", f.LeftPath, d)
		}
		if d := matEqualsGray(f.Right, written[filepath.Base(f.RightPath)]); d != "" {
			t.Errorf("right %s: %s", f.RightPath, d)
		}
		i++
	})
	if !slicesEqual(got, wantTimes) {
		t.Errorf("times %v, want %v", got, wantTimes)
	}
	wantSkips := SkipCounts{SkipTimeOrder: 2, SkipDuplicate: 1, SkipNoPartner: 1, SkipNotFound: 1}
	if s := src.Skipped(); !maps.Equal(s, wantSkips) {
		t.Errorf("Skipped = %v, want %v", s, wantSkips)
	}
}

func slicesEqual(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestPairsDirSubfolders: the left/ right/ layout with timestamps.csv in the
// folder; an image the file does not list is counted per file; patterns
// select rows.
func TestPairsDirSubfolders(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	var rows [][4]string
	for k := 0; k < 4; k++ {
		l := fmt.Sprintf("left/%03d.png", k)
		r := fmt.Sprintf("right/%03d.png", k)
		writePNG(t, filepath.Join(dir, l), greyPattern(16, 12, 2*k))
		writePNG(t, filepath.Join(dir, r), greyPattern(16, 12, 2*k+1))
		if k < 3 {
			rows = append(rows, [4]string{fmt.Sprint(k), fmt.Sprintf("%.3f", 0.2*float64(k)), l, r})
		}
	}
	writeTimestamps(t, filepath.Join(dir, TimestampsName), rows)
	src, err := OpenPairs(PairSpec{Dir: dir})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	var times []float64
	readAll(t, src, func(f *StereoFrame) { times = append(times, f.Time) })
	// Check: the times typed into the timestamps file (0.000, 0.200, 0.400).
	if !slicesEqual(times, []float64{0, 0.2, 0.4}) {
		t.Errorf("times %v, want [0 0.2 0.4]", times)
	}
	// Check: frame 3's two images are in no row: two files counted.
	if got, want := src.Skipped(), (SkipCounts{SkipNotListed: 2}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}

	// Patterns select rows 1 and 2 only; the unlisted frame 3 matches too.
	sel, err := OpenPairs(PairSpec{
		LeftGlob:       filepath.Join(dir, "left", "00[123].png"),
		RightGlob:      filepath.Join(dir, "right", "00[123].png"),
		TimestampsFile: filepath.Join(dir, TimestampsName),
	})
	if err != nil {
		t.Fatal(err)
	}
	defer sel.Close()
	// Check: the times of rows 1 and 2 in the file.
	if got := sel.Times(); !slicesEqual(got, []float64{0.2, 0.4}) {
		t.Errorf("selected times %v, want [0.2 0.4]", got)
	}
	if got, want := sel.Skipped(), (SkipCounts{SkipNotListed: 2}); !maps.Equal(got, want) {
		t.Errorf("selected Skipped = %v, want %v", got, want)
	}
}

// TestPairsNameUnits: names with a time and its unit are read as such; a
// frame rate given as well does not override them.
func TestPairsNameUnits(t *testing.T) {
	checkMats(t)
	for _, tc := range []struct {
		left, right []string
		want        []float64 // seconds, from the names typed here
	}{
		{[]string{"L_t12.500s.png", "L_t12.000s.png", "L_t12.250s.png"},
			[]string{"R_t12.5s.png", "R_t12.0s.png", "R_t12.25s.png"}, []float64{12, 12.25, 12.5}},
		{[]string{"cam0_ms000120.png", "cam0_ms000040.png"},
			[]string{"cam1_ms000120.png", "cam1_ms000040.png"}, []float64{0.04, 0.12}},
		{[]string{"cam0_80ms.png", "cam0_40ms.png"},
			[]string{"cam1_80ms.png", "cam1_40ms.png"}, []float64{0.04, 0.08}},
	} {
		dir := t.TempDir()
		for i, n := range append(tc.left, tc.right...) {
			writePNG(t, filepath.Join(dir, n), greyPattern(8, 8, i))
		}
		lp, rp := strings.SplitN(tc.left[0], "_", 2)[0], strings.SplitN(tc.right[0], "_", 2)[0]
		src, err := OpenPairs(PairSpec{
			LeftGlob:  filepath.Join(dir, lp+"_*"),
			RightGlob: filepath.Join(dir, rp+"_*"),
			FPS:       1,
		})
		if err != nil {
			t.Fatalf("%v: %v", tc.left, err)
		}
		// Check: the times written into the names, in increasing order.
		if got := src.Times(); len(got) != len(tc.want) || func() bool {
			for i := range got {
				if math.Abs(got[i]-tc.want[i]) > 1e-12 {
					return true
				}
			}
			return false
		}() {
			t.Errorf("%v: times %v, want %v", tc.left, got, tc.want)
		}
		if s := src.Skipped(); len(s) != 0 {
			t.Errorf("%v: Skipped = %v, want none", tc.left, s)
		}
		src.Close()
	}
}

// TestParseName: what each name convention reads from a file name.
func TestParseName(t *testing.T) {
	// Check: the values typed into the names below, read by the rules of
	// OpenPairs' documentation.
	for _, tc := range []struct {
		name   string
		kind   nameKind
		value  float64
		digits int
	}{
		{"left_000001234.png", kindNumber, 1234, 9},
		{"/data/run7/right_000001234.tiff", kindNumber, 1234, 9},
		{"cam0_0042.jpg", kindNumber, 42, 4},
		{"left_t12.345s.png", kindSeconds, 12.345, 0},
		{"left_12.5s.png", kindSeconds, 12.5, 0},
		{"left_ms000123.png", kindMillis, 123, 0},
		{"left_123ms.png", kindMillis, 123, 0},
		{"run_10s_left_0001.png", kindNumber, 1, 4},   // label before the number
		{"run_ms5_left_0007.png", kindNumber, 7, 4},   // label before the number
		{"site2_left_t3.5s.png", kindSeconds, 3.5, 0}, // number before the time
		{"left_preview.png", kindNone, 0, 0},
	} {
		p := parseName(tc.name)
		if p.kind != tc.kind || p.value != tc.value || p.digits != tc.digits {
			t.Errorf("%s: got %v %g (%d digits), want %v %g (%d digits)", tc.name, p.kind, p.value, p.digits, tc.kind, tc.value, tc.digits)
		}
	}
}

// TestPairsTIFFAndJPEG reads images written by OpenCV as TIFF (lossless)
// and JPEG (lossy), timed by frame number and frame rate.
func TestPairsTIFFAndJPEG(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	const w, h = 48, 32
	write := func(name string, g *image.Gray) {
		m, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8UC1, g.Pix)
		if err != nil {
			t.Fatal(err)
		}
		defer m.Close()
		if !gocv.IMWrite(filepath.Join(dir, name), m) {
			t.Fatalf("IMWrite %s failed", name)
		}
	}
	// A smooth pattern, so that JPEG's error stays small.
	smooth := func(seed int) *image.Gray {
		g := image.NewGray(image.Rect(0, 0, w, h))
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				g.Pix[y*w+x] = uint8(40 + 3*x + 2*y + 5*seed)
			}
		}
		return g
	}
	tif := [2]*image.Gray{greyPattern(w, h, 1), greyPattern(w, h, 2)}
	write("L_0003.tif", tif[0])
	write("R_0003.tif", tif[1])
	write("L_0004.jpg", smooth(1))
	write("R_0004.jpg", smooth(2))

	src, err := OpenPairs(PairSpec{LeftGlob: filepath.Join(dir, "L_*"), RightGlob: filepath.Join(dir, "R_*"), FPS: 25})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	var times []float64
	n := readAll(t, src, func(f *StereoFrame) {
		times = append(times, f.Time)
		switch filepath.Ext(f.LeftPath) {
		case ".tif":
			// Check: TIFF as written by OpenCV is uncompressed or
			// LZW-compressed, both lossless (TIFF 6.0 specification).
			if d := matEqualsGray(f.Left, tif[0]); d != "" {
				t.Errorf("TIFF left: %s", d)
			}
			if d := matEqualsGray(f.Right, tif[1]); d != "" {
				t.Errorf("TIFF right: %s", d)
			}
		case ".jpg":
			// Check: decoded independently by Go's image/jpeg, the same
			// file gives the same pixels within 2 grey levels. The JPEG
			// standard (ITU-T T.81) bounds the inverse-DCT error rather
			// than fixing the output, so decoders may differ by rounding
			// (from memory); the 2-level tolerance is common practice.
			for _, side := range []struct {
				m    gocv.Mat
				path string
			}{{f.Left, f.LeftPath}, {f.Right, f.RightPath}} {
				b, err := os.ReadFile(side.path)
				if err != nil {
					t.Fatal(err)
				}
				ref, err := jpeg.Decode(bytes.NewReader(b))
				if err != nil {
					t.Fatal(err)
				}
				g, ok := ref.(*image.Gray)
				if !ok {
					t.Fatalf("%s decodes as %T, want grey", side.path, ref)
				}
				maxd := 0
				for y := 0; y < h; y++ {
					for x := 0; x < w; x++ {
						d := int(side.m.GetUCharAt(y, x)) - int(g.Pix[y*g.Stride+x])
						maxd = max(maxd, d, -d)
					}
				}
				if maxd > 2 {
					t.Errorf("%s: OpenCV and Go JPEG decoders differ by %d grey levels", side.path, maxd)
				}
			}
		}
	})
	// Check: frame numbers 3 and 4 at 25 Hz are at 0.12 s and 0.16 s
	// (time = number / frame rate).
	if n != 2 || math.Abs(times[0]-0.12) > 1e-12 || math.Abs(times[1]-0.16) > 1e-12 {
		t.Errorf("got %d pairs at %v, want 2 at [0.12 0.16]", n, times)
	}
	if s := src.Skipped(); len(s) != 0 {
		t.Errorf("Skipped = %v, want none", s)
	}
}

// TestPairsDuplicates: two files with the same number on one side keep the
// first in sorted order and count the other.
func TestPairsDuplicates(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	writePNG(t, filepath.Join(dir, "left_01.png"), greyPattern(8, 8, 1))
	writePNG(t, filepath.Join(dir, "left_1.png"), greyPattern(8, 8, 2))
	writePNG(t, filepath.Join(dir, "right_1.png"), greyPattern(8, 8, 3))
	src, err := OpenPairs(PairSpec{Dir: dir, FPS: 10})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	if src.Len() != 1 {
		t.Errorf("Len = %d, want 1", src.Len())
	}
	if got, want := src.Skipped(), (SkipCounts{SkipDuplicate: 1}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}
}

// TestPairsErrors: each bad spec is one sentence that names what is wrong.
func TestPairsErrors(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	for k := 1; k <= 2; k++ {
		writePNG(t, filepath.Join(dir, fmt.Sprintf("left_%d.png", k)), greyPattern(8, 8, k))
		writePNG(t, filepath.Join(dir, fmt.Sprintf("right_%d.png", k)), greyPattern(8, 8, k))
	}
	writePNG(t, filepath.Join(dir, "mix", "left_t1.0s.png"), greyPattern(8, 8, 0))
	writePNG(t, filepath.Join(dir, "mix", "right_7.png"), greyPattern(8, 8, 0))
	writePNG(t, filepath.Join(dir, "lonely", "left_1.png"), greyPattern(8, 8, 0))
	writePNG(t, filepath.Join(dir, "lonely", "right_2.png"), greyPattern(8, 8, 0))
	bad := filepath.Join(dir, "bad.csv")
	if err := os.WriteFile(bad, []byte("frame,time_s,left,right\n0,abc,left_1.png,right_1.png\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	nohead := filepath.Join(dir, "nohead.csv")
	if err := os.WriteFile(nohead, []byte("frame,t,left,right\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	lg, rg := filepath.Join(dir, "left_*.png"), filepath.Join(dir, "right_*.png")
	for _, tc := range []struct {
		name string
		spec PairSpec
		want string // a fragment the sentence must hold
	}{
		{"no match", PairSpec{LeftGlob: filepath.Join(dir, "nothing_*.png"), RightGlob: rg}, "matches no file"},
		{"one pattern", PairSpec{LeftGlob: lg}, "no right image pattern"},
		{"no time base", PairSpec{LeftGlob: lg, RightGlob: rg}, "give the frame rate"},
		{"negative fps", PairSpec{LeftGlob: lg, RightGlob: rg, FPS: -5}, "-5 Hz"},
		{"huge fps", PairSpec{LeftGlob: lg, RightGlob: rg, FPS: 1e9}, "1e+09 Hz"},
		{"NaN fps", PairSpec{LeftGlob: lg, RightGlob: rg, FPS: math.NaN()}, "NaN Hz"},
		{"mixed names", PairSpec{Dir: filepath.Join(dir, "mix")}, "mix conventions"},
		{"no pair", PairSpec{Dir: filepath.Join(dir, "lonely"), FPS: 10}, "no usable image pair"},
		{"bad time", PairSpec{TimestampsFile: bad}, "line 2"},
		{"bad header", PairSpec{TimestampsFile: nohead}, `neither a "time_s" nor a "utc" column`},
		{"missing csv", PairSpec{TimestampsFile: filepath.Join(dir, "none.csv")}, "does not exist"},
		{"missing dir", PairSpec{Dir: filepath.Join(dir, "none")}, "does not exist"},
		{"nothing", PairSpec{}, "no stereo images"},
		{"bad size", PairSpec{LeftGlob: lg, RightGlob: rg, FPS: 1, ExpectedSize: image.Pt(-1, 4)}, "-1x4"},
	} {
		src, err := OpenPairs(tc.spec)
		if err == nil {
			src.Close()
			t.Errorf("%s: no error", tc.name)
			continue
		}
		msg := err.Error()
		if !strings.Contains(msg, tc.want) || strings.Contains(msg, "\n") || !strings.HasPrefix(msg, "ingest: ") {
			t.Errorf("%s: error %q, want one line holding %q", tc.name, msg, tc.want)
		}
	}
}

// TestPairsClosed: Next after Close is an error, not a panic.
func TestPairsClosed(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	writePNG(t, filepath.Join(dir, "left_1.png"), greyPattern(8, 8, 1))
	writePNG(t, filepath.Join(dir, "right_1.png"), greyPattern(8, 8, 2))
	src, err := OpenPairs(PairSpec{Dir: dir, FPS: 10})
	if err != nil {
		t.Fatal(err)
	}
	src.Close()
	var f StereoFrame
	if err := src.Next(&f); err == nil || errors.Is(err, io.EOF) {
		t.Errorf("Next after Close: %v, want an error", err)
	}
}

// BenchmarkPairsNext decodes 1280×1024 PNG pairs, the demo's frame size.
func BenchmarkPairsNext(b *testing.B) {
	dir := b.TempDir()
	for k := 0; k < 4; k++ {
		for j, side := range []string{"left", "right"} {
			g := greyPattern(1280, 1024, 2*k+j)
			var buf bytes.Buffer
			if err := png.Encode(&buf, g); err != nil {
				b.Fatal(err)
			}
			if err := os.WriteFile(filepath.Join(dir, msName(side, 100*k)), buf.Bytes(), 0o644); err != nil {
				b.Fatal(err)
			}
		}
	}
	src, err := OpenPairs(PairSpec{Dir: dir})
	if err != nil {
		b.Fatal(err)
	}
	defer src.Close()
	var f StereoFrame
	defer func() { release(&f.Left); release(&f.Right) }()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if err := src.Next(&f); err == io.EOF {
			src.Rewind()
			if err := src.Next(&f); err != nil {
				b.Fatal(err)
			}
		} else if err != nil {
			b.Fatal(err)
		}
	}
}

// TestPairsNameRuleReported: how the names were read is said in a
// sentence; nine-digit names that step like a frame counter are refused
// with a sentence that asks for the frame rate or a timestamps file.
func TestPairsNameRuleReported(t *testing.T) {
	checkMats(t)
	mk := func(names ...string) string {
		dir := t.TempDir()
		for i, n := range names {
			writePNG(t, filepath.Join(dir, "left_"+n+".png"), greyPattern(8, 8, 2*i))
			writePNG(t, filepath.Join(dir, "right_"+n+".png"), greyPattern(8, 8, 2*i+1))
		}
		return dir
	}
	// Milliseconds zero-padded to nine digits, 100 ms apart (10 Hz).
	ms := mk("000000000", "000000100", "000000200", "000000300")
	src, err := OpenPairs(PairSpec{Dir: ms})
	if err != nil {
		t.Fatal(err)
	}
	// Check: number / 1000 s, the rule of OpenPairs' documentation.
	wantTimes(t, "ms names", src.Times(), []float64{0, 0.1, 0.2, 0.3})
	if r := src.TimeRule(); !strings.Contains(r, "taken as milliseconds") || !strings.Contains(r, "100 ms") || !strings.Contains(r, "10 Hz") {
		t.Errorf("TimeRule %q does not say the names were read as milliseconds 100 ms apart", r)
	}
	// A nine-digit frame counter: steps of 1 cannot be told from 1000 Hz
	// of milliseconds.
	counter := mk("000000001", "000000002", "000000003", "000000005")
	_, err = OpenPairs(PairSpec{Dir: counter})
	oneLine(t, err, "frame counter", "FPS", "timestamps file", "1000 Hz")
	// With the frame rate given, the same names are frame numbers.
	src, err = OpenPairs(PairSpec{Dir: counter, FPS: 4})
	if err != nil {
		t.Fatal(err)
	}
	// Check: number / 4 Hz (definition of the frame rate).
	wantTimes(t, "counter at 4 Hz", src.Times(), []float64{0.25, 0.5, 0.75, 1.25})
	if r := src.TimeRule(); !strings.Contains(r, "frame number at 4 Hz") {
		t.Errorf("TimeRule %q does not say frame numbers at 4 Hz", r)
	}
	// Names with units, and a timestamps file, say so too.
	units := t.TempDir()
	writePNG(t, filepath.Join(units, "left_t1.5s.png"), greyPattern(8, 8, 1))
	writePNG(t, filepath.Join(units, "right_t1.5s.png"), greyPattern(8, 8, 2))
	src, err = OpenPairs(PairSpec{Dir: units})
	if err != nil {
		t.Fatal(err)
	}
	if r := src.TimeRule(); !strings.Contains(r, "in seconds") {
		t.Errorf("TimeRule %q does not say seconds", r)
	}
}

// TestPairsSkippedFilesNamed: every skipped pair or file is named with its
// reason, in the order met, up to MaxNamedSkips; the rest are counted.
func TestPairsSkippedFilesNamed(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	writePNG(t, filepath.Join(dir, "left_0001.png"), greyPattern(16, 8, 1))
	writePNG(t, filepath.Join(dir, "right_0001.png"), greyPattern(16, 8, 2))
	if err := os.WriteFile(filepath.Join(dir, "left_0002.png"), []byte("not a png"), 0o644); err != nil {
		t.Fatal(err)
	}
	writePNG(t, filepath.Join(dir, "right_0002.png"), greyPattern(16, 8, 3))
	writePNG(t, filepath.Join(dir, "right_0003.png"), greyPattern(16, 8, 4))
	const lone = MaxNamedSkips + 20
	for k := 0; k < lone; k++ {
		writePNG(t, filepath.Join(dir, fmt.Sprintf("left_%04d.png", 100+k)), greyPattern(4, 4, k))
	}
	src, err := OpenPairs(PairSpec{Dir: dir, FPS: 10})
	if err != nil {
		t.Fatal(err)
	}
	readAll(t, src, nil)
	// Check: the files planted above: lone+1 without a partner (the
	// lone left images and right_0003), one unreadable pair.
	if got, want := src.Skipped(), (SkipCounts{SkipNoPartner: lone + 1, SkipUnreadable: 1}); !maps.Equal(got, want) {
		t.Errorf("Skipped = %v, want %v", got, want)
	}
	list := src.SkippedFiles()
	if len(list.Items) != MaxNamedSkips || list.Unnamed != lone+2-MaxNamedSkips {
		t.Errorf("%d named, %d unnamed; want %d and %d", len(list.Items), list.Unnamed, MaxNamedSkips, lone+2-MaxNamedSkips)
	}
	first := list.Items[0]
	if first.Reason != SkipNoPartner || filepath.Base(first.Files[0]) != "left_0100.png" || first.Files[1] != "" {
		t.Errorf("first skipped item %v, want left_0100.png without a partner", first)
	}
	// Rewind and read again: nothing is named twice.
	src.Rewind()
	readAll(t, src, nil)
	if again := src.SkippedFiles(); len(again.Items) != len(list.Items) || again.Unnamed != list.Unnamed {
		t.Errorf("after Rewind: %d named, %d unnamed", len(again.Items), again.Unnamed)
	}
	// A record of fewer skips names them all, unreadable pair included.
	small := t.TempDir()
	writePNG(t, filepath.Join(small, "left_0001.png"), greyPattern(8, 8, 1))
	writePNG(t, filepath.Join(small, "right_0001.png"), greyPattern(8, 8, 2))
	if err := os.WriteFile(filepath.Join(small, "left_0002.png"), []byte("not a png"), 0o644); err != nil {
		t.Fatal(err)
	}
	writePNG(t, filepath.Join(small, "right_0002.png"), greyPattern(8, 8, 3))
	src, err = OpenPairs(PairSpec{Dir: small, FPS: 10})
	if err != nil {
		t.Fatal(err)
	}
	readAll(t, src, nil)
	l := src.SkippedFiles()
	if len(l.Items) != 1 || l.Items[0].Reason != SkipUnreadable || filepath.Base(l.Items[0].Files[0]) != "left_0002.png" || l.Items[0].Detail != "left image" {
		t.Errorf("SkippedFiles = %+v, want the unreadable left_0002.png", l)
	}
}

// TestPairsBadFirstPair: a bad first pair is skipped by the source like
// the same pair later in the record: unreadable, wrong size, or without a
// partner, it is counted and the record goes on from the next pair.
func TestPairsBadFirstPair(t *testing.T) {
	checkMats(t)
	for _, bad := range []string{"unreadable", "size", "partner"} {
		for _, pos := range []int{0, 2} {
			dir := t.TempDir()
			for k := 0; k < 4; k++ {
				l, r := filepath.Join(dir, fmt.Sprintf("left_%d.png", k)), filepath.Join(dir, fmt.Sprintf("right_%d.png", k))
				writePNG(t, r, greyPattern(16, 8, 2*k+1))
				switch {
				case k != pos:
					writePNG(t, l, greyPattern(16, 8, 2*k))
				case bad == "unreadable":
					if err := os.WriteFile(l, []byte("GIF89a"), 0o644); err != nil {
						t.Fatal(err)
					}
				case bad == "size":
					writePNG(t, l, greyPattern(12, 8, 2*k))
				}
			}
			src, err := OpenPairs(PairSpec{Dir: dir, FPS: 1, ExpectedSize: image.Pt(16, 8)})
			if err != nil {
				t.Fatalf("%s at %d: %v", bad, pos, err)
			}
			if n := readAll(t, src, nil); n != 3 {
				t.Errorf("%s pair at %d: %d pairs delivered, want 3", bad, pos, n)
			}
			if n := len(src.SkippedFiles().Items); n != 1 {
				t.Errorf("%s pair at %d: %d skipped items, want 1", bad, pos, n)
			}
		}
	}
}
