package ingest

import (
	"image"
	"io"
	"maps"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gocv.io/x/gocv"
)

// writeVideo writes an MJPG AVI of n frames of size w×h at fps; frame k is
// filled by fill(k, x) (a column-wise grey level).
func writeVideo(t *testing.T, path string, n, w, h int, fps float64, fill func(k, x int) uint8) {
	t.Helper()
	vw, err := gocv.VideoWriterFile(path, "MJPG", fps, w, h, false)
	if err != nil {
		t.Fatalf("VideoWriterFile: %v", err)
	}
	defer vw.Close()
	if !vw.IsOpened() {
		t.Fatalf("VideoWriterFile %s did not open", path)
	}
	pix := make([]byte, w*h)
	for k := 0; k < n; k++ {
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				pix[y*w+x] = fill(k, x)
			}
		}
		m, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8UC1, pix)
		if err != nil {
			t.Fatal(err)
		}
		err = vw.Write(m)
		m.Close()
		if err != nil {
			t.Fatal(err)
		}
	}
}

// meanAbsDiff is the mean of |m(x,y) - want| over the image.
func meanAbsDiff(m gocv.Mat, want uint8) float64 {
	s := 0.0
	for y := 0; y < m.Rows(); y++ {
		for x := 0; x < m.Cols(); x++ {
			s += math.Abs(float64(m.GetUCharAt(y, x)) - float64(want))
		}
	}
	return s / float64(m.Rows()*m.Cols())
}

// level is the flat grey level of frame k of side s (0 left, 1 right).
func level(k, s int) uint8 { return uint8(30 + 15*k + 7*s) }

// TestVideoPair writes a left and a right MJPG video at 12.5 Hz, the right
// two frames longer, and reads them back.
func TestVideoPair(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	const w, h, fps = 64, 48, 12.5
	lp, rp := filepath.Join(dir, "left.avi"), filepath.Join(dir, "right.avi")
	writeVideo(t, lp, 10, w, h, fps, func(k, _ int) uint8 { return level(k, 0) })
	writeVideo(t, rp, 12, w, h, fps, func(k, _ int) uint8 { return level(k, 1) })

	for _, opt := range []VideoOptions{
		{ExpectedSize: image.Pt(w, h)}, // stream times
		{FPS: 5},                       // times from a given frame rate
	} {
		src, err := OpenVideoPair(lp, rp, opt)
		if err != nil {
			t.Fatal(err)
		}
		// Check: the container holds the 10 frames written to the
		// shorter file.
		if src.Len() != 10 {
			t.Errorf("FPS %g: Len = %d, want 10", opt.FPS, src.Len())
		}
		rate := fps
		if opt.FPS != 0 {
			rate = opt.FPS
		}
		k := 0
		n := readAll(t, src, func(f *StereoFrame) {
			// Check: a constant-rate stream puts frame k at k/fps
			// (definition of the frame rate), 12.5 Hz as written or the
			// rate given.
			if f.Index != k || math.Abs(f.Time-float64(k)/rate) > 1e-9 {
				t.Errorf("FPS %g: frame %d at %g s (index %d), want %g s", opt.FPS, k, f.Time, f.Index, float64(k)/rate)
			}
			if f.Left.Cols() != w || f.Left.Rows() != h || f.Right.Cols() != w || f.Right.Rows() != h {
				t.Errorf("frame %d: sizes %dx%d, %dx%d", k, f.Left.Cols(), f.Left.Rows(), f.Right.Cols(), f.Right.Rows())
			}
			// Check: MJPG is lossy, but a flat grey frame survives within
			// 1.5 grey levels on average (JPEG codes a flat 8×8 block by
			// its DC term alone, ITU-T T.81; tolerance common practice).
			if d := meanAbsDiff(f.Left, level(k, 0)); d > 1.5 {
				t.Errorf("frame %d left: mean |error| %.2f grey levels", k, d)
			}
			if d := meanAbsDiff(f.Right, level(k, 1)); d > 1.5 {
				t.Errorf("frame %d right: mean |error| %.2f grey levels", k, d)
			}
			if f.LeftPath != lp || f.RightPath != rp {
				t.Errorf("paths %s, %s", f.LeftPath, f.RightPath)
			}
			k++
		})
		if n != 10 {
			t.Errorf("FPS %g: %d pairs, want 10", opt.FPS, n)
		}
		// Check: the right video's 2 extra frames are counted.
		if got, want := src.Skipped(), (SkipCounts{SkipVideoLength: 2}); !maps.Equal(got, want) {
			t.Errorf("FPS %g: Skipped = %v, want %v", opt.FPS, got, want)
		}
		src.Close()
		var f StereoFrame
		if err := src.Next(&f); err == nil || err == io.EOF {
			t.Errorf("Next after Close: %v, want an error", err)
		}
	}
}

// TestVideoSideBySide splits each frame into its left and right halves.
func TestVideoSideBySide(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	const w, h, fps = 64, 32, 25
	p := filepath.Join(dir, "sbs.avi")
	writeVideo(t, p, 6, 2*w, h, fps, func(k, x int) uint8 {
		if x < w {
			return level(k, 0)
		}
		return level(k, 1)
	})
	src, err := OpenSideBySideVideo(p, VideoOptions{ExpectedSize: image.Pt(w, h)})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	k := 0
	n := readAll(t, src, func(f *StereoFrame) {
		// Check: frame k at k/25 s (definition of the frame rate).
		if math.Abs(f.Time-float64(k)/fps) > 1e-9 {
			t.Errorf("frame %d at %g s, want %g s", k, f.Time, float64(k)/fps)
		}
		if f.Left.Cols() != w || f.Right.Cols() != w || f.Left.Rows() != h {
			t.Errorf("frame %d: halves %dx%d and %dx%d, want %dx%d", k, f.Left.Cols(), f.Left.Rows(), f.Right.Cols(), f.Right.Rows(), w, h)
		}
		// Check: each half holds the grey level written there, within
		// MJPG's loss on flat blocks (ITU-T T.81; tolerance common
		// practice). The halves meet on an 8-pixel block boundary.
		if d := meanAbsDiff(f.Left, level(k, 0)); d > 1.5 {
			t.Errorf("frame %d left half: mean |error| %.2f", k, d)
		}
		if d := meanAbsDiff(f.Right, level(k, 1)); d > 1.5 {
			t.Errorf("frame %d right half: mean |error| %.2f", k, d)
		}
		k++
	})
	if n != 6 {
		t.Errorf("%d pairs, want 6", n)
	}
	if s := src.Skipped(); len(s) != 0 {
		t.Errorf("Skipped = %v, want none", s)
	}
}

// TestVideoErrors: each bad input is one sentence naming the file.
func TestVideoErrors(t *testing.T) {
	checkMats(t)
	dir := t.TempDir()
	good := filepath.Join(dir, "good.avi")
	small := filepath.Join(dir, "small.avi")
	writeVideo(t, good, 3, 32, 24, 10, func(k, _ int) uint8 { return level(k, 0) })
	writeVideo(t, small, 3, 16, 24, 10, func(k, _ int) uint8 { return level(k, 0) })
	junk := filepath.Join(dir, "junk.avi")
	if err := os.WriteFile(junk, []byte(strings.Repeat("not a video ", 100)), 0o644); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	truncated := filepath.Join(dir, "truncated.avi")
	if err := os.WriteFile(truncated, b[:200], 0o644); err != nil {
		t.Fatal(err)
	}
	missing := filepath.Join(dir, "missing.avi")
	for _, tc := range []struct {
		name        string
		left, right string
		sbs         bool
		opt         VideoOptions
		want        string
	}{
		{"missing left", missing, good, false, VideoOptions{}, missing},
		{"missing right", good, missing, false, VideoOptions{}, missing},
		{"junk", junk, good, false, VideoOptions{}, junk},
		{"truncated", good, truncated, false, VideoOptions{}, truncated},
		{"folder", dir, good, false, VideoOptions{}, "not a regular file"},
		{"sizes differ", good, small, false, VideoOptions{}, "32x24 but right video"},
		{"rig size", good, good, false, VideoOptions{ExpectedSize: image.Pt(640, 480)}, "640x480"},
		{"missing side-by-side", missing, "", true, VideoOptions{}, missing},
		{"side-by-side rig size", good, "", true, VideoOptions{ExpectedSize: image.Pt(32, 24)}, "16x24"},
		{"fps", good, good, false, VideoOptions{FPS: -1}, "-1 Hz"},
	} {
		var src *VideoPairSource
		var err error
		if tc.sbs {
			src, err = OpenSideBySideVideo(tc.left, tc.opt)
		} else {
			src, err = OpenVideoPair(tc.left, tc.right, tc.opt)
		}
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

// BenchmarkVideoPairNext decodes and converts 1280×1024 MJPG frame pairs,
// the demo's frame size.
func BenchmarkVideoPairNext(b *testing.B) {
	dir := b.TempDir()
	const w, h, n = 1280, 1024, 8
	var paths [2]string
	for s := range paths {
		paths[s] = filepath.Join(dir, []string{"l.avi", "r.avi"}[s])
		vw, err := gocv.VideoWriterFile(paths[s], "MJPG", 10, w, h, false)
		if err != nil {
			b.Fatal(err)
		}
		g := greyPattern(w, h, s)
		m, err := gocv.NewMatFromBytes(h, w, gocv.MatTypeCV8UC1, g.Pix)
		if err != nil {
			b.Fatal(err)
		}
		for k := 0; k < n; k++ {
			if err := vw.Write(m); err != nil {
				b.Fatal(err)
			}
		}
		m.Close()
		vw.Close()
	}
	var f StereoFrame
	defer func() { release(&f.Left); release(&f.Right) }()
	var src *VideoPairSource
	open := func() {
		var err error
		if src, err = OpenVideoPair(paths[0], paths[1], VideoOptions{}); err != nil {
			b.Fatal(err)
		}
	}
	open()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		err := src.Next(&f)
		if err == io.EOF {
			b.StopTimer()
			src.Close()
			open()
			b.StartTimer()
			err = src.Next(&f)
		}
		if err != nil {
			b.Fatal(err)
		}
	}
	src.Close()
}
