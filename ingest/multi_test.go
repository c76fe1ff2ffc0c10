package ingest

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// multiRecord is a record of nt frames of a small sea in memory.
type multiRecord struct {
	grid  Grid
	times []float64
	eta   [][]float32
}

func makeRecord(nt, ny, nx int, drop map[int]bool) multiRecord {
	r := multiRecord{grid: Grid{X: make([]float64, nx), Y: make([]float64, ny)}}
	for i := range r.grid.X {
		r.grid.X[i] = 0.5 * float64(i)
	}
	for i := range r.grid.Y {
		r.grid.Y[i] = 1 + 0.5*float64(i)
	}
	for k := range nt {
		if drop[k] {
			continue
		}
		tk := 0.1 * float64(k)
		fr := make([]float32, ny*nx)
		for iy := range ny {
			for ix := range nx {
				fr[iy*nx+ix] = float32(0.3*math.Cos(0.7*float64(ix)-1.2*tk) + 0.01*float64(iy))
			}
		}
		if k == 7 {
			fr[5] = 500 // beyond the bound: masked and counted
		}
		r.times = append(r.times, tk)
		r.eta = append(r.eta, fr)
	}
	return r
}

// write writes frames [a, b) of the record to path, with times shifted by
// -shift and the units' reference instant moved by +shift.
func (r multiRecord) write(t *testing.T, path string, a, b int, shift float64) {
	t.Helper()
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		t.Fatal(err)
	}
	units := "seconds since 2026-06-14T09:00:00Z"
	if shift != 0 {
		units = fmt.Sprintf("seconds since 2026-06-14T09:00:%02dZ", int(shift))
	}
	w, err := CreateElevation(path, r.grid, WriteOptions{TimeUnits: units})
	if err != nil {
		t.Fatal(err)
	}
	defer w.Abort()
	for k := a; k < b; k++ {
		if err := w.WriteFrame(r.times[k]-shift, r.eta[k], nil); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Commit(); err != nil {
		t.Fatal(err)
	}
}

// sameStream compares two sources frame by frame, with their gaps and
// counts.
func sameStream(t *testing.T, want, got ElevationStream) {
	t.Helper()
	wm, gm := want.Meta(), got.Meta()
	if !slices.Equal(wm.Times, gm.Times) || !slices.Equal(wm.Grid.X, gm.Grid.X) || !slices.Equal(wm.Grid.Y, gm.Grid.Y) || wm.TimeUnits != gm.TimeUnits {
		t.Fatalf("meta differs: %v / %v, units %q / %q", wm.Times, gm.Times, wm.TimeUnits, gm.TimeUnits)
	}
	if !slices.Equal(want.Gaps(), got.Gaps()) || want.FrameInterval() != got.FrameInterval() {
		t.Errorf("gaps %v / %v, interval %v / %v", want.Gaps(), got.Gaps(), want.FrameInterval(), got.FrameInterval())
	}
	for pass := range 2 {
		var a, b Frame
		for {
			ea, eb := want.Next(&a), got.Next(&b)
			if (ea == nil) != (eb == nil) {
				t.Fatalf("pass %d: errors %v / %v", pass, ea, eb)
			}
			if ea != nil {
				break
			}
			if a.Index != b.Index || a.Time != b.Time || !slices.EqualFunc(a.Eta, b.Eta, sameF32) || !slices.Equal(a.Valid, b.Valid) {
				t.Fatalf("pass %d: frame %d/%d at %v/%v differs", pass, a.Index, b.Index, a.Time, b.Time)
			}
		}
		if fmt.Sprint(want.Skipped()) != fmt.Sprint(got.Skipped()) {
			t.Errorf("pass %d: skipped %v / %v", pass, want.Skipped(), got.Skipped())
		}
		want.Rewind()
		got.Rewind()
	}
	type masker interface{ MaskedCells() CellCounts }
	if fmt.Sprint(want.(masker).MaskedCells()) != fmt.Sprint(got.(masker).MaskedCells()) {
		t.Errorf("masked %v / %v", want.(masker).MaskedCells(), got.(masker).MaskedCells())
	}
}

// TestMultiFileSameAsSingle: a record split into three files (with a
// dropped frame at a file boundary, and the last file's times on another
// reference instant), into one file per frame, or listed in an index,
// reads exactly as the single file: frames, times, gaps, skips and masked
// cells.
func TestMultiFileSameAsSingle(t *testing.T) {
	dir := t.TempDir()
	rec := makeRecord(31, 6, 9, map[int]bool{20: true})
	single := filepath.Join(dir, "single.nc")
	rec.write(t, single, 0, len(rec.times), 0)
	want, err := OpenElevation(single, ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer want.Close()
	if len(want.Gaps()) != 1 || want.Gaps()[0].AfterIndex != 19 {
		t.Fatalf("single file gaps %v", want.Gaps())
	}
	parts := []string{filepath.Join(dir, "p0.nc"), filepath.Join(dir, "p1.nc"), filepath.Join(dir, "p2.nc")}
	rec.write(t, parts[0], 0, 10, 0)
	rec.write(t, parts[1], 10, 20, 0) // the frame at 2.0 s is missing after this file
	rec.write(t, parts[2], 20, len(rec.times), 2)
	t.Run("list", func(t *testing.T) {
		m, err := OpenElevationFiles(parts, ElevationOptions{})
		if err != nil {
			t.Fatal(err)
		}
		defer m.Close()
		sameStream(t, want, m)
	})
	t.Run("glob", func(t *testing.T) {
		m, err := OpenElevations(filepath.Join(dir, "p*.nc"), ElevationOptions{})
		if err != nil {
			t.Fatal(err)
		}
		defer m.Close()
		sameStream(t, want, m)
	})
	t.Run("index", func(t *testing.T) {
		idx := filepath.Join(dir, "parts.json")
		zero, ten := 0, 10
		if err := WriteElevationIndex(idx, []IndexPart{{File: parts[0], FirstFrame: &zero, Frames: 10}, {File: parts[1], FirstFrame: &ten, Frames: 10}, {File: parts[2]}}); err != nil {
			t.Fatal(err)
		}
		if b, _ := os.ReadFile(idx); !strings.Contains(string(b), `"file": "p0.nc"`) {
			t.Errorf("index paths not relative: %s", b)
		}
		m, err := OpenElevations(idx, ElevationOptions{})
		if err != nil {
			t.Fatal(err)
		}
		defer m.Close()
		sameStream(t, want, m)
		txt := filepath.Join(dir, "parts.txt")
		os.WriteFile(txt, []byte("# parts in time order\np0.nc\n\np1.nc\np2.nc\n"), 0o644)
		m2, err := OpenElevations(txt, ElevationOptions{})
		if err != nil {
			t.Fatal(err)
		}
		defer m2.Close()
		sameStream(t, want, m2)
		// A stale index is refused.
		WriteElevationIndex(idx, []IndexPart{{File: parts[0], Frames: 11}, {File: parts[1]}, {File: parts[2]}})
		if _, err := OpenElevations(idx, ElevationOptions{}); err == nil || !strings.Contains(err.Error(), "lists 11 frames") {
			t.Errorf("stale index: %v", err)
		}
	})
	t.Run("per-frame", func(t *testing.T) {
		for k := range rec.times {
			rec.write(t, filepath.Join(dir, "frames", fmt.Sprintf("f%03d.nc", k)), k, k+1, 0)
		}
		m, err := OpenElevationGlob(filepath.Join(dir, "frames", "f*.nc"), ElevationOptions{})
		if err != nil {
			t.Fatal(err)
		}
		defer m.Close()
		if len(m.Paths()) != len(rec.times) {
			t.Fatalf("%d files", len(m.Paths()))
		}
		sameStream(t, want, m)
	})
}

// TestMultiFileRefusals: files that do not belong together are refused
// with a sentence naming the first file that differs.
func TestMultiFileRefusals(t *testing.T) {
	dir := t.TempDir()
	rec := makeRecord(20, 6, 9, nil)
	a, b := filepath.Join(dir, "a.nc"), filepath.Join(dir, "b.nc")
	rec.write(t, a, 0, 10, 0)
	rec.write(t, b, 10, 20, 0)
	// Out of order.
	if _, err := OpenElevationFiles([]string{b, a}, ElevationOptions{}); err == nil || !strings.Contains(err.Error(), a) || !strings.Contains(err.Error(), "time order") {
		t.Errorf("out of order: %v", err)
	}
	// Overlap.
	c := filepath.Join(dir, "c.nc")
	rec.write(t, c, 5, 15, 0)
	if _, err := OpenElevationFiles([]string{a, c}, ElevationOptions{}); err == nil || !strings.Contains(err.Error(), c) {
		t.Errorf("overlap: %v", err)
	}
	// Another grid.
	other := makeRecord(20, 6, 10, nil)
	d := filepath.Join(dir, "d.nc")
	other.write(t, d, 10, 20, 0)
	if _, err := OpenElevationFiles([]string{a, d}, ElevationOptions{}); err == nil || !strings.Contains(err.Error(), d+" differs from "+a+" in its grid") {
		t.Errorf("other grid: %v", err)
	}
	if _, err := OpenElevationGlob(filepath.Join(dir, "none*.nc"), ElevationOptions{}); err == nil || !strings.Contains(err.Error(), "no file matches") {
		t.Errorf("empty glob: %v", err)
	}
}
