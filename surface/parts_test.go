package surface_test

import (
	"context"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"gocv.io/x/gocv"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/samples"
	"crestspeed/surface"
)

// filePairs is a stereo source over a list of image files that can seek
// (surface.IndexSeeker) and name its pairs, the methods the surface stage
// uses when a source has them. Unreadable pairs are skipped and counted
// as ingest.SkipUnreadable.
type filePairs struct {
	left, right []string
	times       []float64
	next        int
	skipped     ingest.SkipCounts
	seeks       int
}

func newFilePairs(left, right []string, times []float64) *filePairs {
	return &filePairs{left: left, right: right, times: times, skipped: ingest.SkipCounts{}}
}

func (s *filePairs) Next(f *ingest.StereoFrame) error {
	for ; s.next < len(s.left); s.next++ {
		l := gocv.IMRead(s.left[s.next], gocv.IMReadGrayScale)
		r := gocv.IMRead(s.right[s.next], gocv.IMReadGrayScale)
		if l.Empty() || r.Empty() {
			l.Close()
			r.Close()
			s.skipped[ingest.SkipUnreadable]++
			continue
		}
		for _, m := range []*gocv.Mat{&f.Left, &f.Right} {
			if m.Ptr() != nil {
				m.Close()
			}
		}
		f.Left, f.Right = l, r
		f.Index, f.Time, f.LeftPath, f.RightPath = s.next, s.times[s.next], s.left[s.next], s.right[s.next]
		s.next++
		return nil
	}
	return io.EOF
}

func (s *filePairs) Skipped() ingest.SkipCounts {
	c := ingest.SkipCounts{}
	for k, v := range s.skipped {
		c[k] = v
	}
	return c
}
func (s *filePairs) Close() error     { return nil }
func (s *filePairs) Len() int         { return len(s.left) }
func (s *filePairs) Times() []float64 { return slices.Clone(s.times) }
func (s *filePairs) SeekIndex(i int) error {
	if i < 0 || i > len(s.left) {
		return fmt.Errorf("pair %d is outside the record", i)
	}
	s.next = i
	s.seeks++
	return nil
}
func (s *filePairs) PairNames(i int) (string, string) { return s.left[i], s.right[i] }

// deploymentPairs lists the frames of a rendered deployment.
func deploymentPairs(t testing.TB, dir string, frames int, fps float64) (left, right []string, times []float64) {
	fd := filepath.Join(dir, samples.DeploymentFramesDir)
	for i := 0; i < frames; i++ {
		tt := float64(i) / fps
		left = append(left, filepath.Join(fd, samples.FrameName(samples.LeftSide, tt)))
		right = append(right, filepath.Join(fd, samples.FrameName(samples.RightSide, tt)))
		times = append(times, tt)
	}
	return left, right, times
}

func sameMaps(t *testing.T, what string, a, b []surface.Map) {
	t.Helper()
	if len(a) != len(b) {
		t.Fatalf("%s: %d maps against %d", what, len(a), len(b))
	}
	for i := range a {
		if a[i].Index != b[i].Index || a[i].Time != b[i].Time || !slices.Equal(a[i].Points, b[i].Points) ||
			!slices.EqualFunc(a[i].Eta, b[i].Eta, func(x, y float32) bool { return math.Float32bits(x) == math.Float32bits(y) }) {
			t.Fatalf("%s: map %d (pair %d) differs", what, i, a[i].Index)
		}
	}
}

// TestPartsEqualWholeRun: the record settled once, its geometry saved and
// loaded back, and reconstructed in three parts with 1 and 2 workers gives
// exactly, bit for bit, the maps of the whole-record run with 3 workers
// (the maps depend only on each pair and the geometry). Both sources are
// checked: the project's image-pair source (read from its start) and a
// source that seeks.
func TestPartsEqualWholeRun(t *testing.T) {
	dir, _ := cachedDeployment(t, "tiny-v1", tinySpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	rig.SeaPlane = nil
	opt := surface.DefaultOptions()
	opt.Plane.Frames = 4
	opt.Workers = 3
	var whole memSink
	res, err := surface.Run(context.Background(), rig, pairsOpener(filepath.Join(dir, samples.DeploymentFramesDir)), opt, &whole)
	if err != nil {
		t.Fatal(err)
	}
	if res.Frames != 4 {
		t.Fatalf("%d maps of 4 pairs", res.Frames)
	}
	geom := whole.setup.Geometry
	t.Logf("σ_η %.4f m, band ±%.3f m, %d strips %v; grid: %s", geom.SeaSigmaM, geom.Band.HalfWidthM, len(geom.Band.Strips), geom.Band.Strips, geom.GridNote)
	path := filepath.Join(t.TempDir(), "geometry.yaml")
	if err := geom.Save(path); err != nil {
		t.Fatal(err)
	}
	loaded, err := surface.LoadGeometry(path)
	if err != nil {
		t.Fatal(err)
	}
	a, _ := geom.Marshal()
	b, _ := loaded.Marshal()
	if string(a) != string(b) || loaded.Plane != geom.Plane || !slices.Equal(loaded.Grid.X, geom.Grid.X) || !slices.Equal(loaded.Grid.Y, geom.Grid.Y) {
		t.Fatal("the geometry read back differs from the one saved")
	}
	l, r, times := deploymentPairs(t, dir, 4, 2)
	openers := map[string]surface.Opener{
		"pair source": pairsOpener(filepath.Join(dir, samples.DeploymentFramesDir)),
		"seeking source": func() (ingest.StereoSource, error) {
			return newFilePairs(l, r, times), nil
		},
	}
	for name, open := range openers {
		for _, workers := range []int{1, 2} {
			o := opt
			o.Workers = workers
			var parts []surface.Map
			for _, rg := range [][2]int{{0, 1}, {1, 3}, {3, 4}} {
				var s memSink
				pr, err := surface.ReconstructRange(context.Background(), rig, open, loaded, o, rg[0], rg[1], &s)
				if err != nil {
					t.Fatal(err)
				}
				if pr.Frames != rg[1]-rg[0] || s.setup.First != rg[0] || s.setup.Last != rg[1] {
					t.Fatalf("%s: part %v gave %d maps", name, rg, pr.Frames)
				}
				parts = append(parts, s.maps...)
			}
			sameMaps(t, fmt.Sprintf("%s, %d workers, 3 parts", name, workers), whole.maps, parts)
		}
	}

	// A part written to its own files, and read back.
	out := filepath.Join(t.TempDir(), "part-1.nc")
	fs := &surface.FileSink{Path: out, PointsPath: filepath.Join(t.TempDir(), "part-1-points.nc")}
	if _, err := surface.WritePart(context.Background(), rig, openers["seeking source"], loaded, opt, 1, 3, fs); err != nil {
		t.Fatal(err)
	}
	src, err := ingest.OpenElevation(out, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	var f ingest.Frame
	for k := 1; k < 3; k++ {
		if err := src.Next(&f); err != nil {
			t.Fatal(err)
		}
		m := whole.maps[k]
		for c, v := range m.Eta {
			if (v == v) != f.Valid[c] || (v == v && f.Eta[c] != v) || f.Time != m.Time {
				t.Fatalf("part file frame %d cell %d: %v (valid %v) against %v", k, c, f.Eta[c], f.Valid[c], v)
			}
		}
	}
	if err := src.Next(&f); !errors.Is(err, io.EOF) {
		t.Errorf("the part file has more than its 2 frames (%v)", err)
	}

	// Bad ranges and a geometry of another record are errors.
	var s memSink
	for _, rg := range [][2]int{{-1, 2}, {2, 2}, {3, 5}} {
		if _, err := surface.ReconstructRange(context.Background(), rig, openers["seeking source"], loaded, opt, rg[0], rg[1], &s); err == nil {
			t.Errorf("range %v accepted", rg)
		}
	}
	short := func() (ingest.StereoSource, error) { return newFilePairs(l[:3], r[:3], times[:3]), nil }
	if _, err := surface.ReconstructRange(context.Background(), rig, short, loaded, opt, 0, 3, &s); err == nil {
		t.Error("a geometry settled on 4 pairs was used on a record of 3")
	}
}

// TestBadPairsAreSkippedAndNamed: a first pair of another size and a
// corrupt pair later are skipped, counted and named (files and reasons),
// whatever their place, and the other pairs are reconstructed; the sampled
// pairs of the settle step skip them too.
func TestBadPairsAreSkippedAndNamed(t *testing.T) {
	dir, _ := cachedDeployment(t, "tiny-v1", tinySpec())
	rig, err := calib.LoadRig(filepath.Join(dir, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	l, r, times := deploymentPairs(t, dir, 4, 2)
	rec := t.TempDir()
	var L, R []string
	for i := range l {
		for side, src := range []string{l[i], r[i]} {
			dst := filepath.Join(rec, filepath.Base(src))
			switch {
			case i == 0:
				// First pair: half size.
				m := gocv.IMRead(src, gocv.IMReadGrayScale)
				small := gocv.NewMat()
				gocv.Resize(m, &small, image.Pt(320, 256), 0, 0, gocv.InterpolationArea)
				gocv.IMWrite(dst, small)
				m.Close()
				small.Close()
			case i == 2 && side == 0:
				// A truncated PNG.
				data, err := os.ReadFile(src)
				if err != nil {
					t.Fatal(err)
				}
				if err := os.WriteFile(dst, data[:len(data)/3], 0o644); err != nil {
					t.Fatal(err)
				}
			default:
				if err := os.Symlink(src, dst); err != nil {
					t.Fatal(err)
				}
			}
			if side == 0 {
				L = append(L, dst)
			} else {
				R = append(R, dst)
			}
		}
	}
	opt := surface.DefaultOptions()
	opt.Plane.Frames = 4
	for name, open := range map[string]surface.Opener{
		"pair source":    pairsOpener(rec),
		"seeking source": func() (ingest.StereoSource, error) { return newFilePairs(L, R, times), nil },
	} {
		var s memSink
		res, err := surface.Run(context.Background(), rig, open, opt, &s)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		t.Logf("%s: %d maps, skipped %v: %+v; settle skipped %+v", name, res.Frames, res.Skipped, res.SkippedPairs, s.setup.Geometry.Skipped)
		if res.Frames != 2 || len(res.SkippedPairs) != 2 {
			t.Fatalf("%s: %d maps and %d pairs named; want 2 and 2", name, res.Frames, len(res.SkippedPairs))
		}
		p0, p2 := res.SkippedPairs[0], res.SkippedPairs[1]
		if p0.Index != 0 || p0.Reason != surface.SkipRigSize || p0.Left != L[0] || p0.Right != R[0] || p0.TimeS != 0 {
			t.Errorf("%s: first pair named %+v", name, p0)
		}
		if p2.Index != 2 || p2.Reason != ingest.SkipUnreadable || p2.TimeS != times[2] {
			t.Errorf("%s: corrupt pair named %+v", name, p2)
		}
		if name == "seeking source" && (p2.Left != L[2] || p2.Right != R[2]) {
			t.Errorf("%s: corrupt pair's files named %q, %q", name, p2.Left, p2.Right)
		}
		if res.Skipped[surface.SkipRigSize] != 1 || res.Skipped[ingest.SkipUnreadable] != 1 {
			t.Errorf("%s: skip counts %v", name, res.Skipped)
		}
		g := s.setup.Geometry
		if len(g.Skipped) != 1 || g.Skipped[0].Index != 0 || len(g.Samples) != 2 {
			t.Errorf("%s: settle step sampled %+v and skipped %+v", name, g.Samples, g.Skipped)
		}
	}
}
