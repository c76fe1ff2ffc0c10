package tracking

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os/exec"
	"slices"
	"strings"
	"testing"
)

// paintRect sets foam on the cells whose centres lie in the rectangle
// s0 < s ≤ s1, n0 ≤ n < n1 of the (s, n) frame at angle theta.
func paintRect(g Geometry, theta float64, mask []uint8, s0, s1, n0, n1 float64) {
	c, sn := math.Cos(theta), math.Sin(theta)
	for iy := 0; iy < g.Ny; iy++ {
		for ix := 0; ix < g.Nx; ix++ {
			x := g.X0 + float64(ix)*g.Dx
			y := g.Y0 + float64(iy)*g.Dy
			s, n := x*c+y*sn, -x*sn+y*c
			if s > s0 && s <= s1 && n >= n0 && n < n1 {
				mask[iy*g.Nx+ix] = 1
			}
		}
	}
}

// Connected foam patches with 8-connectivity must be exactly those of
// scipy.ndimage.label with a 3×3 structuring element (Debian python3-scipy),
// on a random mask with unknown cells removed.
func TestPatchLabellingMatchesScipy(t *testing.T) {
	py := "/usr/bin/python3"
	if _, err := exec.LookPath(py); err != nil {
		t.Skip("no /usr/bin/python3")
	}
	g := Geometry{Nx: 70, Ny: 50, Dx: 0.5, Dy: 0.5}
	rng := rand.New(rand.NewPCG(7, 8))
	foam := make([]uint8, g.Nx*g.Ny)
	valid := make([]bool, g.Nx*g.Ny)
	var sb strings.Builder
	for i := range foam {
		if rng.Float64() < 0.3 {
			foam[i] = 1
		}
		valid[i] = rng.Float64() > 0.05
		v := 0
		if foam[i] != 0 && valid[i] {
			v = 1
		}
		fmt.Fprintf(&sb, "%d ", v)
	}
	f, err := NewPatchFinder(g, WhitecapOptions{MinArea: 1e-9})
	if err != nil {
		t.Fatal(err)
	}
	patches, small, err := f.Find(foam, valid, 0, 0, f.NewScratch())
	if err != nil {
		t.Fatal(err)
	}
	if small != 0 {
		t.Fatalf("%d patches below a minimum area of 1e-9 m²", small)
	}
	var got []int
	for _, p := range patches {
		got = append(got, p.Cells)
	}
	slices.Sort(got)
	cmd := exec.Command(py, "-c", `import sys, numpy as np
from scipy import ndimage
m = np.array(sys.stdin.read().split(), dtype=int).reshape(50, 70)
lab, n = ndimage.label(m, structure=np.ones((3, 3), dtype=int))
print(" ".join(str(v) for v in sorted(np.bincount(lab.ravel())[1:])))`)
	cmd.Stdin = strings.NewReader(sb.String())
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("scipy: %v", err)
	}
	var want []int
	for _, w := range strings.Fields(string(out)) {
		var v int
		fmt.Sscan(w, &v)
		want = append(want, v)
	}
	if !slices.Equal(got, want) {
		t.Fatalf("patch sizes differ from scipy.ndimage.label: %d patches vs %d", len(got), len(want))
	}
	t.Logf("%d patches, as scipy", len(got))
}

// Two cells touching at a corner are one patch under 8-connectivity (its
// definition); a patch below the minimum area is dropped and counted.
func TestPatchConnectivityAndMinArea(t *testing.T) {
	g := Geometry{Nx: 10, Ny: 10, Dx: 1, Dy: 1}
	foam := make([]uint8, 100)
	foam[2*10+2], foam[3*10+3], foam[4*10+4] = 1, 1, 1 // diagonal: one patch of 3 cells
	foam[8*10+8] = 1                                   // isolated cell
	f, _ := NewPatchFinder(g, WhitecapOptions{MinArea: 2.5})
	patches, small, err := f.Find(foam, nil, 0, 0, f.NewScratch())
	if err != nil {
		t.Fatal(err)
	}
	if len(patches) != 1 || patches[0].Cells != 3 || small != 1 {
		t.Fatalf("got %d patches (first %d cells), %d small; want one of 3 cells and 1 small", len(patches), patches[0].Cells, small)
	}
	if patches[0].Area != 3 {
		t.Errorf("area %g m², want 3 (3 cells of 1 m²)", patches[0].Area)
	}
}

// A rectangle of foam along the grid axes: on every line through cell
// centres the front is the midpoint between the last foam cell and the
// water cell ahead (the definition of the sub-cell front), the front length
// is the number of foam rows times the spacing and the area the number of
// cells times the cell area (geometry of the rectangle).
func TestFrontOfAxisAlignedRectangle(t *testing.T) {
	g := Geometry{Nx: 80, Ny: 60, Dx: 0.5, Dy: 0.5}
	foam := make([]uint8, g.Nx*g.Ny)
	// columns 20..31 (x = 10 .. 15.5), rows 10..23 (y = 5 .. 11.5)
	paintRect(g, 0, foam, 9.75, 15.75, 4.75, 11.75)
	f, _ := NewPatchFinder(g, WhitecapOptions{})
	patches, _, err := f.Find(foam, nil, 3, 0.3, f.NewScratch())
	if err != nil || len(patches) != 1 {
		t.Fatalf("patches %d, err %v", len(patches), err)
	}
	p := patches[0]
	if p.Cells != 12*14 || math.Abs(p.Area-12*14*0.25) > 1e-12 {
		t.Errorf("cells %d area %g, want 168 cells, 42 m²", p.Cells, p.Area)
	}
	if p.FrontLines != 14 || p.CensoredLines != 0 || math.Abs(p.FrontLength-7) > 1e-12 {
		t.Errorf("front lines %d censored %d length %g m, want 14, 0, 7 m", p.FrontLines, p.CensoredLines, p.FrontLength)
	}
	if math.Abs(p.Front.S-15.75) > 1e-9 || p.Front.Points != 14 {
		t.Errorf("front at s = %.6f m on %d lines, want 15.75 m (midpoint of x = 15.5 and 16) on 14", p.Front.S, p.Front.Points)
	}
	for n := 5.0; n <= 11.5; n += 0.5 {
		if v := p.Front.SOnLine(n); math.Abs(v-15.75) > 1e-5 {
			t.Errorf("front on line n = %g at %.6f, want 15.75", n, v)
		}
	}
	if math.Abs(p.X-12.75) > 1e-9 || math.Abs(p.Y-8.25) > 1e-9 {
		t.Errorf("centroid (%.4f, %.4f), want (12.75, 8.25)", p.X, p.Y)
	}
	if p.Edge {
		t.Error("patch inside the grid flagged as touching the edge")
	}
}

// An oblique rectangle (front across θ0 = 30°): the sampled front lies
// within one grid cell behind the true front and its length within one
// line spacing of the true length (sampling of the rectangle on the grid).
func TestFrontOfObliqueRectangle(t *testing.T) {
	theta := 30 * math.Pi / 180
	g := Geometry{Nx: 120, Ny: 100, Dx: 0.5, Dy: 0.5, Theta: theta}
	foam := make([]uint8, g.Nx*g.Ny)
	sf, L := 40.3, 12.0
	paintRect(g, theta, foam, sf-4, sf, 3, 3+L)
	f, _ := NewPatchFinder(g, WhitecapOptions{})
	patches, _, err := f.Find(foam, nil, 0, 0, f.NewScratch())
	if err != nil || len(patches) != 1 {
		t.Fatalf("patches %d, err %v", len(patches), err)
	}
	p := patches[0]
	if d := sf - p.Front.S; d < -0.05 || d > 0.5 {
		t.Errorf("front at s = %.3f m, want within one cell behind %.3f", p.Front.S, sf)
	}
	if math.Abs(p.FrontLength-L) > f.Step()+1e-9 {
		t.Errorf("front length %.3f m, want %.1f ± %.2f", p.FrontLength, L, f.Step())
	}
	t.Logf("front s = %.3f m (true %.3f), length %.3f m (true %.1f), area %.2f m², %d lines, %d censored", p.Front.S, sf, p.FrontLength, L, p.Area, p.FrontLines, p.CensoredLines)
	wantArea := 4 * L
	if math.Abs(p.Area-wantArea)/wantArea > 0.05 {
		t.Errorf("area %.2f m², want %.0f ± 5 %%", p.Area, wantArea)
	}
}

// Where the foam reaches the grid border, or the cell ahead is of unknown
// elevation, the front is not observed on that line (censored), and the
// patch is flagged as touching the edge.
func TestFrontCensored(t *testing.T) {
	g := Geometry{Nx: 40, Ny: 30, Dx: 1, Dy: 1}
	foam := make([]uint8, g.Nx*g.Ny)
	paintRect(g, 0, foam, 33.5, 39.5, 4.5, 9.5) // up to the last column
	f, _ := NewPatchFinder(g, WhitecapOptions{})
	patches, _, _ := f.Find(foam, nil, 0, 0, f.NewScratch())
	if len(patches) != 1 {
		t.Fatalf("%d patches", len(patches))
	}
	p := patches[0]
	if p.FrontLines != 0 || p.CensoredLines != 5 || p.Front.Points != 0 || !p.Edge {
		t.Errorf("front lines %d, censored %d, points %d, edge %v; want 0, 5, 0, true", p.FrontLines, p.CensoredLines, p.Front.Points, p.Edge)
	}
	// inside the grid, but unknown cells ahead of two of its five rows
	clear(foam)
	paintRect(g, 0, foam, 10.5, 15.5, 4.5, 9.5)
	valid := make([]bool, len(foam))
	for i := range valid {
		valid[i] = true
	}
	valid[5*g.Nx+16], valid[6*g.Nx+16] = false, false
	patches, _, _ = f.Find(foam, valid, 0, 0, f.NewScratch())
	p = patches[0]
	if p.FrontLines != 3 || p.CensoredLines != 2 || p.FrontLength != 3 || !p.Edge {
		t.Errorf("front lines %d, censored %d, length %g, edge %v; want 3, 2, 3 m, true", p.FrontLines, p.CensoredLines, p.FrontLength, p.Edge)
	}
}

// A rectangle moving at a set speed along θ0 is one whitecap track whose
// front path follows the true front c·t within half a cell plus the
// sub-cell sampling of the rectangle (its truth).
func TestWhitecapLinkingFollowsFront(t *testing.T) {
	g := Geometry{Nx: 160, Ny: 40, Dx: 0.5, Dy: 0.5}
	f, _ := NewPatchFinder(g, WhitecapOptions{})
	sc := f.NewScratch()
	c, dt := 4.3, 0.1
	l := NewWhitecapLinker(LinkOptions{MaxGapFrames: 1, GateS: 2, GateN: 1, Speed: func(Crest) float64 { return 0.8 * c }})
	foam := make([]uint8, g.Nx*g.Ny)
	s0 := 10.1
	for k := 0; k < 30; k++ {
		clear(foam)
		sf := s0 + c*float64(k)*dt
		paintRect(g, 0, foam, sf-3, sf, 5, 13)
		patches, _, err := f.Find(foam, nil, k, float64(k)*dt, sc)
		if err != nil {
			t.Fatal(err)
		}
		l.Push(k, float64(k)*dt, patches)
	}
	tracks, st := l.Finish()
	if len(tracks) != 1 || len(tracks[0].Patches) != 30 {
		t.Fatalf("%d tracks (%+v)", len(tracks), st)
	}
	for k, p := range tracks[0].Patches {
		want := s0 + c*float64(k)*dt
		if d := want - p.Front.Path; d < -0.25-1e-9 || d > 0.25+1e-9 {
			t.Errorf("frame %d: front path %.3f m, true front %.3f m", k, p.Front.Path, want)
		}
		if p.FrontLength != 8 {
			t.Errorf("frame %d: front length %g m, want 8", k, p.FrontLength)
		}
	}
}

// A front ahead of a crest by less than half the crest's zero-crossing
// width is tied to it, one further ahead is not (the gate as defined).
func TestRidingCrest(t *testing.T) {
	g := Geometry{Nx: 160, Ny: 60, Dx: 0.5, Dy: 0.5}
	lambda := 20.0
	eta := sinusoidFrame(g, 0.5, 2*math.Pi/lambda, 0, 0)
	d := NewDetector(g, DetectOptions{MinElevation: 0.1, MinLength: 5})
	crests := d.Detect(eta, nil, 0, 0, d.NewScratch())
	if len(crests) < 2 {
		t.Fatalf("%d crests", len(crests))
	}
	var c0 Crest
	for _, c := range crests {
		if c.S > 30 && c.S < 50 {
			c0 = c
		}
	}
	mk := func(ds float64) Crest {
		front := make([]float64, 10)
		for i := range front {
			front[i] = c0.S + ds
		}
		fc, _ := NewFront(0, 0, 0, 10, 0.5, front)
		return fc
	}
	if i := RidingCrest(mk(0.3*c0.Width), crests, ParentGate{}); i < 0 || crests[i].S != c0.S {
		t.Errorf("front 0.3 w_c ahead not tied to the crest at s = %.2f", c0.S)
	}
	if i := RidingCrest(mk(0.7*c0.Width), crests, ParentGate{}); i >= 0 {
		t.Errorf("front 0.7 w_c ahead tied to the crest at s = %.2f", crests[i].S)
	}
}

// NewFront keeps the longest unbroken run of observed lines.
func TestNewFrontLongestRun(t *testing.T) {
	nan := math.NaN()
	f, ok := NewFront(0, 0, 0, 0, 1, []float64{1, 2, nan, 5, 5, 5, 5, nan, 3})
	if !ok || f.Points != 4 || f.NMin != 3 || f.NMax != 6 || f.S != 5 || f.SlopeSN != 0 {
		t.Fatalf("front %+v", f)
	}
	if _, ok := NewFront(0, 0, 0, 0, 1, []float64{nan, nan}); ok {
		t.Fatal("front without observed lines accepted")
	}
}

// Benchmark: patches, fronts and linking for one 256×256 frame with a few
// whitecaps.
func BenchmarkWhitecapFrame(b *testing.B) {
	g := Geometry{Nx: 256, Ny: 256, Dx: 0.5, Dy: 0.5, Theta: 0.3}
	foam := make([]uint8, g.Nx*g.Ny)
	for k := 0; k < 8; k++ {
		s := 10 + 13*float64(k)
		paintRect(g, g.Theta, foam, s-3, s, float64(k)*5-20, float64(k)*5-12)
	}
	f, _ := NewPatchFinder(g, WhitecapOptions{})
	sc := f.NewScratch()
	l := NewWhitecapLinker(LinkOptions{MaxGapFrames: 1, GateS: 2, GateN: 1, Speed: func(Crest) float64 { return 5 }})
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		p, _, _ := f.Find(foam, nil, i, float64(i)*0.1, sc)
		l.Push(i, float64(i)*0.1, p)
	}
}
