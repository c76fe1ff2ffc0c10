package samples

// Synthetic whitecaps.
//
// A FoamPatch is a rectangle of foam in its own frame (u along its
// direction of travel, v across it): its front, a straight segment of
// length FrontLengthM across the direction, starts at (FrontXM, FrontYM) at
// StartS and moves at SpeedMPS for DurationS; the foam trails LengthM
// behind it. A grid cell is foam while the patch is active when its centre
// lies in
//
//	d − LengthM < u ≤ d,  −FrontLengthM/2 ≤ v < FrontLengthM/2,
//	d = SpeedMPS·(t − StartS),
//
// u and v measured from the front's starting centre. The truth of every
// frame — front position, speed, length, area — is therefore the analytic
// rectangle; the mask is its sampling on the grid (the most advanced foam
// cell centre lies less than one cell behind the true front). With a
// direction along a grid axis and lengths that are whole numbers of cells,
// the half-open intervals hold exactly LengthM/dx × FrontLengthM/dy cells.
//
// The automatic mode paints one patch at the focus of a focusing packet
// when the linear crest there is steep enough: it starts at the focus time
// with its front on the crest at the focus and rides on at SpeedRatio times
// the nominal phase speed of the packet's centre period.

import (
	"fmt"
	"math"
	"sort"

	"crestspeed/speed"
)

// FoamSpec describes the foam mask written with a synthetic record.
type FoamSpec struct {
	// Enabled adds the foam(time, y, x) variable to the record.
	Enabled bool        `json:"enabled" yaml:"enabled"`
	Patches []FoamPatch `json:"patches,omitempty" yaml:"patches"`
	Auto    AutoFoam    `json:"auto,omitempty" yaml:"auto"`
	// SaturatedFrames are frame numbers whose mask is written all ones,
	// as a failed (saturated) foam detector would give.
	SaturatedFrames []int `json:"saturated_frames,omitempty" yaml:"saturated_frames"`
}

// FoamPatch is one painted whitecap (see the file notes for its shape).
type FoamPatch struct {
	StartS       float64 `json:"start_s" yaml:"start_s"`                 // time the foam appears, s
	FrontXM      float64 `json:"front_x_m" yaml:"front_x_m"`             // centre of the front at StartS, m
	FrontYM      float64 `json:"front_y_m" yaml:"front_y_m"`             //
	DirectionDeg float64 `json:"direction_deg" yaml:"direction_deg"`     // direction of travel, counter-clockwise from +x
	SpeedMPS     float64 `json:"front_speed_mps" yaml:"front_speed_mps"` // front speed, m/s
	FrontLengthM float64 `json:"front_length_m" yaml:"front_length_m"`   // front length across the direction, m
	LengthM      float64 `json:"length_m" yaml:"length_m"`               // foam length behind the front, m
	DurationS    float64 `json:"duration_s" yaml:"duration_s"`           // active for t in [StartS, StartS+DurationS)
}

// Validate reports the first absurd setting.
func (p FoamPatch) Validate() error {
	fin := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	switch {
	case !fin(p.StartS) || !fin(p.FrontXM) || !fin(p.FrontYM) || !fin(p.DirectionDeg) || !fin(p.SpeedMPS):
		return fmt.Errorf("foam patch has a non-finite start time, position, direction or speed")
	case !(p.FrontLengthM > 0) || !fin(p.FrontLengthM):
		return fmt.Errorf("foam patch front length %g m must be positive", p.FrontLengthM)
	case !(p.LengthM > 0) || !fin(p.LengthM):
		return fmt.Errorf("foam patch length %g m must be positive", p.LengthM)
	case !(p.DurationS > 0) || !fin(p.DurationS):
		return fmt.Errorf("foam patch duration %g s must be positive", p.DurationS)
	}
	return nil
}

// Active reports whether the patch is painted at time t.
func (p FoamPatch) Active(t float64) bool { return t >= p.StartS && t < p.StartS+p.DurationS }

// FrontAt returns the centre of the front at time t, m.
func (p FoamPatch) FrontAt(t float64) (x, y float64) {
	d := p.SpeedMPS * (t - p.StartS)
	th := p.DirectionDeg * math.Pi / 180
	return p.FrontXM + d*math.Cos(th), p.FrontYM + d*math.Sin(th)
}

// AutoFoam paints a whitecap at the focus of a focusing packet when the
// linear crest there reaches MinSteepness.
type AutoFoam struct {
	Enabled bool `json:"enabled" yaml:"enabled"`
	// MinSteepness is the crest steepness S_c = a_c π / w_c at the focus
	// from which the crest is painted as breaking.
	MinSteepness float64 `json:"min_steepness" yaml:"min_steepness"`
	// SpeedRatio is the front speed over the nominal phase speed of the
	// centre period; 0 means 0.8 (Rapp & Melville 1990).
	SpeedRatio float64 `json:"speed_ratio,omitempty" yaml:"speed_ratio"`
	// FrontLengthM, LengthM and DurationS shape the patch; 0 means half
	// the centre wavelength, an eighth of it, and one centre period.
	FrontLengthM float64 `json:"front_length_m,omitempty" yaml:"front_length_m"`
	LengthM      float64 `json:"length_m,omitempty" yaml:"length_m"`
	DurationS    float64 `json:"duration_s,omitempty" yaml:"duration_s"`
}

// WhitecapTruth is the foam truth of a synthetic record.
type WhitecapTruth struct {
	Patches         []FoamPatch    `json:"patches"` // every painted patch, explicit and automatic
	SaturatedFrames []int          `json:"saturated_frames,omitempty"`
	Auto            *AutoFoamTruth `json:"auto,omitempty"`
}

// AutoFoamTruth records the automatic mode's decision.
type AutoFoamTruth struct {
	FocusSteepness float64 `json:"focus_steepness"` // S_c of the linear crest at the focus
	FocusWidthM    float64 `json:"focus_width_m"`   // its zero-crossing width
	PhaseSpeedMPS  float64 `json:"phase_speed_mps"` // nominal phase speed of the centre period
	Painted        bool    `json:"painted"`         // the steepness reached MinSteepness
	PatchIndex     int     `json:"patch_index"`     // index of the painted patch in Patches, -1 if none
}

// FoamPainter paints foam masks frame by frame.
type FoamPainter struct {
	xs, ys    []float64
	patches   []FoamPatch
	saturated map[int]bool
}

// NewFoamPainter prepares painting of the patches on the grid with cell
// centres xs, ys (regular, increasing); saturated frames are painted all
// ones.
func NewFoamPainter(patches []FoamPatch, saturated []int, xs, ys []float64) (*FoamPainter, error) {
	if len(xs) < 2 || len(ys) < 2 {
		return nil, fmt.Errorf("samples: foam needs a grid of at least 2×2 cells, got %d×%d", len(xs), len(ys))
	}
	for i, p := range patches {
		if err := p.Validate(); err != nil {
			return nil, fmt.Errorf("samples: foam patch %d: %v", i, err)
		}
	}
	sat := map[int]bool{}
	for _, f := range saturated {
		if f < 0 {
			return nil, fmt.Errorf("samples: saturated foam frame %d is negative", f)
		}
		sat[f] = true
	}
	return &FoamPainter{xs: xs, ys: ys, patches: append([]FoamPatch(nil), patches...), saturated: sat}, nil
}

// Paint writes the mask of frame number frame at time t into dst
// (row-major, nx·ny cells) and returns the number of foam cells.
func (fp *FoamPainter) Paint(frame int, t float64, dst []uint8) int {
	nx, ny := len(fp.xs), len(fp.ys)
	if fp.saturated[frame] {
		for i := range dst {
			dst[i] = 1
		}
		return len(dst)
	}
	clear(dst)
	dx := fp.xs[1] - fp.xs[0]
	dy := fp.ys[1] - fp.ys[0]
	count := 0
	for _, p := range fp.patches {
		if !p.Active(t) {
			continue
		}
		th := p.DirectionDeg * math.Pi / 180
		c, s := math.Cos(th), math.Sin(th)
		d := p.SpeedMPS * (t - p.StartS)
		// bounding box of the rectangle
		x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
		for _, uv := range [4][2]float64{{d - p.LengthM, -p.FrontLengthM / 2}, {d - p.LengthM, p.FrontLengthM / 2}, {d, -p.FrontLengthM / 2}, {d, p.FrontLengthM / 2}} {
			x := p.FrontXM + uv[0]*c - uv[1]*s
			y := p.FrontYM + uv[0]*s + uv[1]*c
			x0, x1 = math.Min(x0, x), math.Max(x1, x)
			y0, y1 = math.Min(y0, y), math.Max(y1, y)
		}
		ix0 := max(int(math.Floor((x0-fp.xs[0])/dx)), 0)
		ix1 := min(int(math.Ceil((x1-fp.xs[0])/dx)), nx-1)
		iy0 := max(int(math.Floor((y0-fp.ys[0])/dy)), 0)
		iy1 := min(int(math.Ceil((y1-fp.ys[0])/dy)), ny-1)
		for iy := iy0; iy <= iy1; iy++ {
			ry := fp.ys[iy] - p.FrontYM
			for ix := ix0; ix <= ix1; ix++ {
				rx := fp.xs[ix] - p.FrontXM
				u := rx*c + ry*s
				v := -rx*s + ry*c
				if u <= d && u > d-p.LengthM && v >= -p.FrontLengthM/2 && v < p.FrontLengthM/2 {
					k := iy*nx + ix
					if dst[k] == 0 {
						dst[k] = 1
						count++
					}
				}
			}
		}
	}
	return count
}

// Validate reports the first absurd setting.
func (f FoamSpec) Validate() error {
	if !f.Enabled {
		if len(f.Patches) > 0 || f.Auto.Enabled || len(f.SaturatedFrames) > 0 {
			return fmt.Errorf("foam patches, automatic foam or saturated foam frames are given but foam is not enabled; set foam.enabled")
		}
		return nil
	}
	for i, p := range f.Patches {
		if err := p.Validate(); err != nil {
			return fmt.Errorf("foam patch %d: %v", i, err)
		}
	}
	a := f.Auto
	if a.Enabled {
		switch {
		case !(a.MinSteepness > 0) || a.MinSteepness > 2:
			return fmt.Errorf("automatic foam needs a crest steepness threshold in (0, 2], got %g", a.MinSteepness)
		case !(a.SpeedRatio >= 0) || a.SpeedRatio > 3:
			return fmt.Errorf("automatic foam speed ratio %g is outside [0, 3]", a.SpeedRatio)
		case !(a.FrontLengthM >= 0) || !(a.LengthM >= 0) || !(a.DurationS >= 0) ||
			math.IsInf(a.FrontLengthM, 0) || math.IsInf(a.LengthM, 0) || math.IsInf(a.DurationS, 0):
			return fmt.Errorf("automatic foam lengths and duration must be non-negative and finite")
		}
	}
	for _, fr := range f.SaturatedFrames {
		if fr < 0 {
			return fmt.Errorf("saturated foam frame %d is negative", fr)
		}
	}
	return nil
}

// setupFoam resolves the foam of scenario s (sea its waves) on the grid
// with cell centres xs, ys: the painter and the truth, or nil, nil when foam
// is not enabled.
func (f FoamSpec) setupFoam(s Scenario, sea *LinearSea, xs, ys []float64) (*FoamPainter, *WhitecapTruth, error) {
	if err := f.Validate(); err != nil {
		return nil, nil, err
	}
	if !f.Enabled {
		return nil, nil, nil
	}
	truth := &WhitecapTruth{Patches: append([]FoamPatch{}, f.Patches...)}
	if f.Auto.Enabled {
		if s.Kind != KindPacket {
			return nil, nil, fmt.Errorf("automatic foam is painted at the focus of a focusing packet; the sea is %q, so give explicit foam patches instead", s.Kind)
		}
		p, at, err := f.Auto.atFocus(s.Packet, sea)
		if err != nil {
			return nil, nil, err
		}
		at.PatchIndex = -1
		if at.Painted {
			at.PatchIndex = len(truth.Patches)
			truth.Patches = append(truth.Patches, p)
		}
		truth.Auto = &at
	}
	if len(f.SaturatedFrames) > 0 {
		truth.SaturatedFrames = append([]int(nil), f.SaturatedFrames...)
		sort.Ints(truth.SaturatedFrames)
	}
	painter, err := NewFoamPainter(truth.Patches, truth.SaturatedFrames, xs, ys)
	if err != nil {
		return nil, nil, err
	}
	return painter, truth, nil
}

// atFocus measures the linear crest at the packet's focus — its elevation
// a_c = η there, its zero-crossing width w_c on the profile along the
// packet's direction, S_c = a_c π / w_c (docs/methods.md) — and, when S_c
// reaches the threshold, the patch painted there.
func (a AutoFoam) atFocus(pk FocusingPacket, sea *LinearSea) (FoamPatch, AutoFoamTruth, error) {
	th := pk.DirectionDeg * math.Pi / 180
	c, s := math.Cos(th), math.Sin(th)
	eta := func(u float64) float64 {
		return sea.Eta(pk.FocusXM+u*c, pk.FocusYM+u*s, pk.FocusTimeS)
	}
	cp, err := speed.PhaseSpeedFromPeriod(pk.CentrePeriodS, pk.DepthM, speed.Current{}, th, 0)
	if err != nil {
		return FoamPatch{}, AutoFoamTruth{}, err
	}
	lambda := cp * pk.CentrePeriodS
	ac := eta(0)
	if !(ac > 0) {
		return FoamPatch{}, AutoFoamTruth{}, fmt.Errorf("the packet has no crest at its focus (η = %g m); automatic foam cannot be placed", ac)
	}
	// zero crossings either side of the focus: march, then bisect
	crossing := func(dir float64) (float64, error) {
		h := lambda / 400
		prev := 0.0
		for u := h; u <= 2*lambda; u += h {
			if eta(dir*u) < 0 {
				lo, hi := prev, u
				for k := 0; k < 60; k++ {
					m := 0.5 * (lo + hi)
					if eta(dir*m) >= 0 {
						lo = m
					} else {
						hi = m
					}
				}
				return 0.5 * (lo + hi), nil
			}
			prev = u
		}
		return 0, fmt.Errorf("the crest at the packet's focus has no zero crossing within two wavelengths; automatic foam cannot be placed")
	}
	ahead, err := crossing(1)
	if err != nil {
		return FoamPatch{}, AutoFoamTruth{}, err
	}
	behind, err := crossing(-1)
	if err != nil {
		return FoamPatch{}, AutoFoamTruth{}, err
	}
	w := ahead + behind
	at := AutoFoamTruth{FocusSteepness: ac * math.Pi / w, FocusWidthM: w, PhaseSpeedMPS: cp}
	at.Painted = at.FocusSteepness >= a.MinSteepness
	ratio := a.SpeedRatio
	if ratio == 0 {
		ratio = 0.8
	}
	p := FoamPatch{
		StartS: pk.FocusTimeS, FrontXM: pk.FocusXM, FrontYM: pk.FocusYM, DirectionDeg: pk.DirectionDeg,
		SpeedMPS: ratio * cp, FrontLengthM: a.FrontLengthM, LengthM: a.LengthM, DurationS: a.DurationS,
	}
	if p.FrontLengthM == 0 {
		p.FrontLengthM = lambda / 2
	}
	if p.LengthM == 0 {
		p.LengthM = lambda / 8
	}
	if p.DurationS == 0 {
		p.DurationS = pk.CentrePeriodS
	}
	return p, at, nil
}
