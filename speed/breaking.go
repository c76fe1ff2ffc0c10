package speed

// Whitecaps and breaking statistics.
//
// WhitecapAnalyser takes the foam masks of a record one frame at a time
// (Add), extracts the whitecap patches and their active breaking fronts
// (tracking.PatchFinder), ties each to the crest it rides on, links them
// over time (tracking.WhitecapLinker, the crest Linker working on fronts),
// and at the end (Finish) gives:
//
//   - the front speed c_br of every whitecap in every frame, by the same
//     local quadratic (Savitzky–Golay) fit of the front's path along θ0 as
//     crest speeds (LocalQuadraticSlope), with the window shifted inside the
//     track at its ends (FrontSpeeds); the ratios c_br/c_p and c_br/c_loc,
//     c_loc the local phase speed of the parent crest;
//   - per whitecap, the parent crest's steepness S_c and speed ratios when
//     foam first appears;
//   - Phillips's (1985, J. Fluid Mech. 156, 505–531) distribution Λ(c) of
//     breaking-front length per unit sea-surface area per unit speed
//     interval, the breaking-crest passage rate R = ∫ c Λ(c) dc and the
//     dissipation estimate ε = b ρ_w g⁻¹ ∫ c⁵ Λ(c) dc (Breaking);
//   - the whitecap coverage W(t), foam cells over known cells per frame, and
//     its mean.
//
// Foam masks whose whole-frame foam fraction exceeds a setting (default
// 0.5) are taken as untrustworthy (a saturated or failed detector) and the
// frame is skipped and counted rather than read as one huge whitecap.
// Memory does not grow with the record beyond the result rows (one per
// whitecap per frame) and one coverage row per frame.

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"crestspeed/tracking"
)

// Defaults of BreakingOptions.
const (
	// DefaultMaxFoamFraction: a frame more than half covered by foam is
	// taken as a failed foam mask (a setting; open-ocean whitecap coverage
	// is of the order of a few per cent even in strong winds, common
	// practice).
	DefaultMaxFoamFraction = 0.5
	// DefaultFrontPredictRatio: fronts are predicted to move at 0.8 c_p
	// between frames when linking (whitecap speeds of about 0.8 of the
	// phase speed: Rapp & Melville 1990, Phil. Trans. R. Soc. A 331 —
	// PHYSICS.md §5).
	DefaultFrontPredictRatio = 0.8
	// DefaultSpeedBinWidth is the width of the Λ(c) speed bins, m/s.
	DefaultSpeedBinWidth = 0.25
	// DefaultMaxSpeedRatio: the Λ(c) bins reach 1.5 c_p.
	DefaultMaxSpeedRatio = 1.5
	// DefaultBreakingParameter is the breaking strength b of the
	// dissipation estimate: 7×10⁻⁵, of the order of field estimates from
	// whitecap fronts (Thomson, Gemmrich & Jessup 2009, Geophys. Res. Lett.
	// 36 — from memory). Published b spans more than an order of magnitude:
	// laboratory breakers give 10⁻³–10⁻² and more (Melville 1994; Drazen,
	// Melville & Lenain 2008, J. Fluid Mech. 611), field estimates 10⁻⁵–10⁻⁴
	// and a dependence on wave steepness (Gemmrich, Banner & Garrett 2008;
	// Romero, Melville & Kleiss 2012, J. Phys. Oceanogr. 42) — from memory.
	// ε is therefore an order-of-magnitude estimate.
	DefaultBreakingParameter = 7e-5
	// DefaultWaterDensity is the density of sea water, kg/m³ (common
	// practice).
	DefaultWaterDensity = 1025.0
	// DefaultMinPatchArea is the smallest whitecap patch kept by default,
	// m²: a choice of this tool, measured on the rendered stereo
	// deployment, where sky glints on steep faces pass the foam detector as
	// patches of well under 2 m² while the painted whitecaps cover about
	// 4 m². Actively breaking crests worth a front speed span several grid
	// cells in any case.
	DefaultMinPatchArea = 2.0
	// DefaultMinSpeedPoints is the fewest frames in a front-speed window.
	DefaultMinSpeedPoints = 5
)

// SkipFoamSaturated is the reason counted for frames whose foam mask covers
// more than MaxFoamFraction of the known grid.
const SkipFoamSaturated = "foam mask saturated"

// BreakingOptions configure the whitecap analysis. Zero values take the
// defaults stated on each field. The fields with yaml tags are settings of
// the "track" section of the configuration; the others are resolved from
// the record.
type BreakingOptions struct {
	// MaxFoamFraction: frames whose foam covers more than this fraction of
	// the known cells are skipped and counted (default 0.5).
	MaxFoamFraction float64 `yaml:"foam_saturation_fraction"`
	// MinPatchArea is the smallest whitecap patch kept, m² (default four
	// grid cells).
	MinPatchArea float64 `yaml:"min_foam_patch_area_m2"`
	// Step is the spacing of the front sampling lines, m (default the
	// smaller grid spacing).
	Step float64 `yaml:"-"`
	// PredictRatio: between frames a front is predicted to move at
	// PredictRatio·c_p along θ0 (default 0.8).
	PredictRatio float64 `yaml:"-"`
	// MaxGapFrames is how many consecutive frames a whitecap may miss and
	// continue; used as given.
	MaxGapFrames int `yaml:"-"`
	// GateS and GateN are the linking gates along and across θ0, m; 0
	// means max(4 steps, a tenth of the deep-water wavelength 2π c_p²/g at
	// c_p) along, and 2 steps across — as for crests.
	GateS, GateN float64 `yaml:"-"`
	// ParentAlongFraction and ParentAcross bound the crest a whitecap is
	// tied to (tracking.ParentGate); 0 means half a crest width along θ0
	// and 2 steps across.
	ParentAlongFraction, ParentAcross float64 `yaml:"-"`
	// SpeedWindowS is the full width of the front-speed fit window, s;
	// required (use the crest-speed window of the record).
	SpeedWindowS float64 `yaml:"-"`
	// MinSpeedPoints is the fewest frames in a fit window (default 5).
	MinSpeedPoints int `yaml:"-"`
	// BinWidth is the width of the Λ(c) speed bins, m/s (default 0.25);
	// MaxSpeed the top of the last bin, m/s (default 1.5 c_p).
	BinWidth float64 `yaml:"lambda_bin_width_mps"`
	MaxSpeed float64 `yaml:"-"`
	// BreakingParameter is b of ε = b ρ_w g⁻¹ ∫ c⁵ Λ(c) dc (default
	// 7×10⁻⁵; see DefaultBreakingParameter for its large uncertainty).
	BreakingParameter float64 `yaml:"breaking_parameter_b"`
	// WaterDensity is ρ_w, kg/m³ (default 1025).
	WaterDensity float64 `yaml:"-"`
}

// DefaultBreakingOptions returns the defaults of the settings (the fields
// with yaml tags); the others stay zero and are resolved from the record.
func DefaultBreakingOptions() BreakingOptions {
	return BreakingOptions{
		MaxFoamFraction:   DefaultMaxFoamFraction,
		MinPatchArea:      DefaultMinPatchArea,
		BinWidth:          DefaultSpeedBinWidth,
		BreakingParameter: DefaultBreakingParameter,
	}
}

// Validate reports the first absurd setting among those a user gives (zero
// means the default), naming its configuration key.
func (o BreakingOptions) Validate() error {
	in := func(v, lo, hi float64) bool { return v >= lo && v <= hi } // false for NaN
	switch {
	case !in(o.MaxFoamFraction, 0, 1):
		return fmt.Errorf("foam_saturation_fraction %g is outside (0, 1]; use e.g. 0.5", o.MaxFoamFraction)
	case !in(o.MinPatchArea, 0, 1e6):
		return fmt.Errorf("min_foam_patch_area_m2 %g m² is outside 0–10⁶ m² (0 = four grid cells)", o.MinPatchArea)
	case !in(o.BinWidth, 0, 10):
		return fmt.Errorf("lambda_bin_width_mps %g m/s is outside 0–10 m/s", o.BinWidth)
	case !in(o.BreakingParameter, 0, 1):
		return fmt.Errorf("breaking_parameter_b %g is outside 0–1", o.BreakingParameter)
	}
	return nil
}

func (o BreakingOptions) withDefaults(g tracking.Geometry, ref References) BreakingOptions {
	if o.MaxFoamFraction == 0 {
		o.MaxFoamFraction = DefaultMaxFoamFraction
	}
	if o.Step == 0 {
		o.Step = math.Min(g.Dx, g.Dy)
	}
	if o.MinPatchArea == 0 {
		o.MinPatchArea = 4 * g.Dx * g.Dy
	}
	if o.PredictRatio == 0 {
		o.PredictRatio = DefaultFrontPredictRatio
	}
	if o.GateS == 0 {
		lambda := 2 * math.Pi * ref.PeakPhaseSpeed * ref.PeakPhaseSpeed / G
		o.GateS = math.Max(4*o.Step, 0.1*lambda)
	}
	if o.GateN == 0 {
		o.GateN = 2 * o.Step
	}
	if o.ParentAlongFraction == 0 {
		o.ParentAlongFraction = 0.5
	}
	if o.ParentAcross == 0 {
		o.ParentAcross = 2 * o.Step
	}
	if o.MinSpeedPoints == 0 {
		o.MinSpeedPoints = DefaultMinSpeedPoints
	}
	if o.BinWidth == 0 {
		o.BinWidth = DefaultSpeedBinWidth
	}
	if o.MaxSpeed == 0 {
		o.MaxSpeed = DefaultMaxSpeedRatio * ref.PeakPhaseSpeed
	}
	if o.BreakingParameter == 0 {
		o.BreakingParameter = DefaultBreakingParameter
	}
	if o.WaterDensity == 0 {
		o.WaterDensity = DefaultWaterDensity
	}
	return o
}

// validate reports the first absurd setting of resolved options.
func (o BreakingOptions) validate() error {
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	switch {
	case bad(o.MaxFoamFraction) || o.MaxFoamFraction <= 0 || o.MaxFoamFraction > 1:
		return fmt.Errorf("maximum foam fraction %g is outside (0, 1]; use e.g. 0.5", o.MaxFoamFraction)
	case bad(o.MinPatchArea) || o.MinPatchArea < 0:
		return fmt.Errorf("minimum whitecap area %g m² is invalid; give a positive area", o.MinPatchArea)
	case bad(o.Step) || o.Step <= 0:
		return fmt.Errorf("whitecap sampling step %g m is invalid; give a positive step", o.Step)
	case bad(o.PredictRatio) || o.PredictRatio <= 0 || o.PredictRatio > 3:
		return fmt.Errorf("front prediction ratio %g is outside (0, 3]; use e.g. 0.8", o.PredictRatio)
	case o.MaxGapFrames < 0 || o.MaxGapFrames > 100:
		return fmt.Errorf("maximum gap of %d frames is outside 0–100", o.MaxGapFrames)
	case bad(o.GateS) || o.GateS <= 0 || bad(o.GateN) || o.GateN < 0:
		return fmt.Errorf("whitecap linking gates %g m along and %g m across are invalid; give positive gates", o.GateS, o.GateN)
	case bad(o.ParentAlongFraction) || o.ParentAlongFraction <= 0 || o.ParentAlongFraction > 2:
		return fmt.Errorf("parent-crest gate of %g crest widths is outside (0, 2]; use e.g. 0.5", o.ParentAlongFraction)
	case bad(o.ParentAcross) || o.ParentAcross < 0:
		return fmt.Errorf("parent-crest gate across θ0 of %g m is invalid; give a non-negative distance", o.ParentAcross)
	case bad(o.SpeedWindowS) || o.SpeedWindowS <= 0:
		return fmt.Errorf("whitecap speed window %g s is invalid; give a positive window, e.g. the crest-speed window of the record", o.SpeedWindowS)
	case o.MinSpeedPoints < 3:
		return fmt.Errorf("a front-speed window of %d frames is too small for a quadratic fit; use at least 3", o.MinSpeedPoints)
	case bad(o.BinWidth) || o.BinWidth <= 0:
		return fmt.Errorf("speed bin width %g m/s is invalid; give a positive width, e.g. 0.25", o.BinWidth)
	case bad(o.MaxSpeed) || o.MaxSpeed < o.BinWidth || o.MaxSpeed/o.BinWidth > 100000:
		return fmt.Errorf("top speed %g m/s does not fit bins of %g m/s; give a top speed of one to 100000 bins", o.MaxSpeed, o.BinWidth)
	case bad(o.BreakingParameter) || o.BreakingParameter <= 0:
		return fmt.Errorf("breaking parameter b = %g is invalid; give a positive value, e.g. 7e-5", o.BreakingParameter)
	case bad(o.WaterDensity) || o.WaterDensity < 900 || o.WaterDensity > 1100:
		return fmt.Errorf("water density %g kg/m³ is outside 900–1100", o.WaterDensity)
	}
	return nil
}

// CoverageRow is the whitecap coverage of one analysed frame.
type CoverageRow struct {
	Frame      int
	Time       float64
	FoamCells  int
	ValidCells int
	Coverage   float64 // W = FoamCells / ValidCells
	Area       float64 // known sea-surface area, m²
}

// FitKind says how a front speed was obtained.
type FitKind uint8

// Kinds of front-speed fit.
const (
	FitNone    FitKind = iota // too few frames: no speed
	FitCentred                // local quadratic over the full window around the frame, as for crests
	FitEdge                   // quadratic over the first or last full window of the track (track ends)
	FitShort                  // the track spans less than a window: quadratic (or line) over all of it
)

func (k FitKind) String() string {
	switch k {
	case FitCentred:
		return "centred"
	case FitEdge:
		return "edge"
	case FitShort:
		return "short"
	}
	return "none"
}

// WhitecapRow is one whitecap in one frame.
type WhitecapRow struct {
	TrackID int
	tracking.Patch
	FrontSpeed      float64 // c_br along θ0, m/s (NaN when Fit is FitNone)
	Fit             FitKind
	PhaseSpeedPeak  float64 // c_p, m/s
	PhaseSpeedLocal float64 // c_loc of the parent crest, m/s (NaN without parent or local wavelength)
	RatioPeak       float64 // c_br / c_p
	RatioLocal      float64 // c_br / c_loc
	// ParentTrackID is the crest track the whitecap rides on in this frame
	// (0 when no crest was within the gate or its track is unknown).
	ParentTrackID   int
	ParentSteepness float64 // S_c of the parent crest (NaN without parent)
}

// Whitecap summarises one whitecap track.
type Whitecap struct {
	TrackID               int
	FirstFrame, LastFrame int
	Start, End            float64 // s
	Rows                  int
	// OnsetSeen is true when the frame before the whitecap's first frame
	// was analysed (not missing, skipped or before the record) and its
	// first patch keeps off the grid border and unknown cells: foam then
	// really first appeared there.
	OnsetSeen   bool
	MedianSpeed float64 // of the rows with a speed, m/s
	// TrackSpeed is the slope of the least-squares line through the
	// front's whole path, m/s (NaN below three frames): the whitecap's
	// mean front speed, least affected by the grid quantisation of the
	// front (see FrontSpeeds).
	TrackSpeed       float64
	MedianRatioPeak  float64
	MedianRatioLocal float64
	MaxArea          float64 // m²
	MaxFrontLength   float64 // m
	// The parent crest at the first frame in which the whitecap was tied
	// to one, ParentDelayS after the whitecap's first frame (0 when tied
	// from the start); ParentTrackID 0 and NaN figures when never tied.
	ParentTrackID    int
	ParentDelayS     float64
	ParentSteepness  float64 // S_c
	ParentCrestSpeed float64 // c_cr, m/s (NaN when the crest rows were not given)
	ParentRatioPeak  float64 // c_cr / c_p
	ParentRatioLocal float64 // c_cr / c_loc
}

// WhitecapResult is what WhitecapAnalyser.Finish returns.
type WhitecapResult struct {
	Options        BreakingOptions // resolved
	FramesAnalysed int             // frames whose foam mask was used
	Skipped        map[string]int  // frames not used, by reason
	SmallPatches   int             // patches below the minimum area (all frames)
	FrontsUnseen   int             // patches whose front ran into the border or unknown cells on every line
	Coverage       []CoverageRow
	MeanCoverage   float64 // mean of W over the analysed frames
	Link           tracking.LinkStats
	Rows           []WhitecapRow
	Whitecaps      []Whitecap
	// LengthWithoutSpeed is the front length of the rows without a speed,
	// summed over frames and divided by FramesAnalysed, m: front length
	// missing from Λ(c) for that reason.
	LengthWithoutSpeed float64
	Breaking           BreakingStats
}

// FrontSample is one breaking front in one frame: its speed, its length
// and the known sea-surface area of its frame.
type FrontSample struct {
	Speed  float64 // m/s
	Length float64 // m
	Area   float64 // m²
}

// LambdaBin is one speed bin of Λ(c).
type LambdaBin struct {
	CLow, CHigh float64 // m/s
	Lambda      float64 // m⁻² s
	Fronts      int     // front samples (fronts × frames) in the bin
	Length      float64 // their length, summed over frames, m
}

// BreakingStats are the Phillips (1985) breaking statistics of a record.
type BreakingStats struct {
	Frames   int // frames averaged over
	BinWidth float64
	Bins     []LambdaBin
	// MeanFrontLengthPerArea is Σ L/A over the binned fronts divided by
	// Frames: ∫ Λ(c) dc, m⁻¹.
	MeanFrontLengthPerArea float64
	// LengthOutOfRange is the front length with a speed outside the bins
	// (negative, or at least the top speed), summed over frames and
	// divided by Frames, m.
	LengthOutOfRange float64
	// PassageRate R = ∫ c Λ(c) dc, 1/s, and Dissipation
	// ε = b ρ_w g⁻¹ ∫ c⁵ Λ(c) dc, W/m², over the binned fronts: exact
	// moments of the fronts' own speeds (no binning error).
	PassageRate, Dissipation float64
	// The same by the midpoint rule on the bins, Σ c_j^p Λ_j Δc.
	PassageRateBinned, DissipationBinned float64
	B, WaterDensity                      float64
}

// Breaking computes Phillips's (1985, J. Fluid Mech. 156, 505–531)
// distribution Λ(c) — total breaking-front length per unit sea-surface area
// per unit speed interval, m⁻² s — from front samples of a record of frames
// frames, on bins [jΔc, (j+1)Δc) up to maxSpeed:
//
//	Λ(c_j) = Σ_frames Σ_fronts in bin j  L / (A · frames · Δc),
//
// A the known area of the front's frame; and its moments: the
// breaking-crest passage rate R = ∫ c Λ(c) dc (Phillips 1985) and the
// energy dissipation rate per unit area ε = b ρ_w g⁻¹ ∫ c⁵ Λ(c) dc
// (Phillips 1985, with b the breaking strength parameter; see
// DefaultBreakingParameter for its uncertainty). Fronts with a NaN speed
// must be left out by the caller.
func Breaking(fronts []FrontSample, frames int, binWidth, maxSpeed, b, rhoW float64) (BreakingStats, error) {
	if frames <= 0 {
		return BreakingStats{}, errors.New("breaking statistics need at least one analysed frame")
	}
	if !(binWidth > 0) || !(maxSpeed >= binWidth) || maxSpeed/binWidth > 100000 {
		return BreakingStats{}, fmt.Errorf("speed bins of %g m/s up to %g m/s are invalid; give a positive width and a top speed of one to 100000 bins", binWidth, maxSpeed)
	}
	nb := int(math.Ceil(maxSpeed/binWidth - 1e-9))
	st := BreakingStats{Frames: frames, BinWidth: binWidth, Bins: make([]LambdaBin, nb), B: b, WaterDensity: rhoW}
	for j := range st.Bins {
		st.Bins[j].CLow = float64(j) * binWidth
		st.Bins[j].CHigh = float64(j+1) * binWidth
	}
	top := float64(nb) * binWidth
	nf := float64(frames)
	var m1, m5 float64
	for _, f := range fronts {
		if math.IsNaN(f.Speed) || !(f.Area > 0) || !(f.Length >= 0) {
			return BreakingStats{}, fmt.Errorf("front sample with speed %g m/s, length %g m on an area of %g m² is invalid", f.Speed, f.Length, f.Area)
		}
		if f.Speed < 0 || f.Speed >= top {
			st.LengthOutOfRange += f.Length / nf
			continue
		}
		j := min(int(f.Speed/binWidth), nb-1)
		w := f.Length / f.Area / nf
		st.Bins[j].Lambda += w / binWidth
		st.Bins[j].Fronts++
		st.Bins[j].Length += f.Length
		st.MeanFrontLengthPerArea += w
		m1 += f.Speed * w
		m5 += math.Pow(f.Speed, 5) * w
	}
	st.PassageRate = m1
	st.Dissipation = b * rhoW / G * m5
	st.PassageRateBinned = LambdaMoment(st.Bins, 1)
	st.DissipationBinned = b * rhoW / G * LambdaMoment(st.Bins, 5)
	return st, nil
}

// LambdaMoment returns ∫ c^p Λ(c) dc over the bins by the midpoint rule,
// Σ c_j^p Λ_j (c_high − c_low) with c_j the bin centre.
func LambdaMoment(bins []LambdaBin, p float64) float64 {
	var sum float64
	for _, b := range bins {
		c := 0.5 * (b.CLow + b.CHigh)
		sum += math.Pow(c, p) * b.Lambda * (b.CHigh - b.CLow)
	}
	return sum
}

// FrontSpeeds returns the speed of a front at each of its times t (s) from
// its path x (m) along θ0. Where the window of ±half seconds around t[i]
// lies within the track, it is the local quadratic (Savitzky–Golay) slope
// over that window, exactly as for crest speeds (LocalQuadraticSlope). Near
// the ends of the track, where the window would be cut short, it is the
// slope at t[i] of the quadratic fitted to the first (last) full window of
// 2·half seconds — the usual Savitzky–Golay end treatment (Savitzky & Golay
// 1964; what scipy.signal.savgol_filter does with mode='interp'), which
// keeps every estimate on a full window. A track that spans less than a
// window is fitted whole: by the quadratic when it has minPoints samples,
// else by a straight line (at least 3 samples). kind says which applied
// (FitNone: no speed, NaN). v and kind are reused when large enough.
//
// A front sampled on a grid is known to about ±dx/2 in each frame (its
// cells are foam or not), and when it moves along a grid axis all lines
// share the same sub-cell phase, so the error does not average across the
// front: a window of duration W then carries a speed error of up to about
// dx/W (0.25 m/s for dx = 0.5 m and W = 2 s), less for fronts oblique to
// the grid. Whitecap.TrackSpeed, one line through the whole track, is least
// affected.
func FrontSpeeds(t, x []float64, half float64, minPoints int, v []float64, kind []FitKind) ([]float64, []FitKind) {
	n := len(t)
	v = growF(v, n)
	kind = growK(kind, n)
	minPoints = max(minPoints, 3)
	for i := range v {
		v[i], kind[i] = math.NaN(), FitNone
	}
	if n < 3 {
		return v, kind
	}
	const eps = 1e-9
	// the first and last full windows
	hiStart := 0
	for hiStart < n-1 && t[hiStart+1]-t[0] <= 2*half+eps {
		hiStart++
	}
	loEnd := n - 1
	for loEnd > 0 && t[n-1]-t[loEnd-1] <= 2*half+eps {
		loEnd--
	}
	short := t[n-1]-t[0] < 2*half-eps // the track spans less than a window
	for i := 0; i < n; i++ {
		switch {
		case short:
			if n >= minPoints {
				if s, ok := quadraticSlopeAt(t, x, 0, n-1, t[i]); ok {
					v[i], kind[i] = s, FitShort
				}
			} else if s, ok := lineSlope(t, x); ok {
				v[i], kind[i] = s, FitShort
			}
		case t[i]-t[0] < half-eps:
			if hiStart+1 >= minPoints {
				if s, ok := quadraticSlopeAt(t, x, 0, hiStart, t[i]); ok {
					v[i], kind[i] = s, FitEdge
				}
			}
		case t[n-1]-t[i] < half-eps:
			if n-loEnd >= minPoints {
				if s, ok := quadraticSlopeAt(t, x, loEnd, n-1, t[i]); ok {
					v[i], kind[i] = s, FitEdge
				}
			}
		default:
			if s, ok := LocalQuadraticSlope(t, x, i, half, minPoints); ok {
				v[i], kind[i] = s, FitCentred
			}
		}
	}
	return v, kind
}

// quadraticSlopeAt fits x = b0 + b1 τ + b2 τ², τ = t − t0, to samples lo..hi
// by least squares and returns b1, the slope at t0.
func quadraticSlopeAt(t, x []float64, lo, hi int, t0 float64) (float64, bool) {
	var s0, s1, s2, s3, s4, y0, y1, y2 float64
	for j := lo; j <= hi; j++ {
		tau := t[j] - t0
		tau2 := tau * tau
		s0++
		s1 += tau
		s2 += tau2
		s3 += tau2 * tau
		s4 += tau2 * tau2
		y0 += x[j]
		y1 += x[j] * tau
		y2 += x[j] * tau2
	}
	a := [3][3]float64{{s0, s1, s2}, {s1, s2, s3}, {s2, s3, s4}}
	b := [3]float64{y0, y1, y2}
	det := det3(a)
	if math.Abs(det) < 1e-300 {
		return math.NaN(), false
	}
	a1 := a
	for r := 0; r < 3; r++ {
		a1[r][1] = b[r]
	}
	return det3(a1) / det, true
}

// lineSlope is the least-squares slope of x against t.
func lineSlope(t, x []float64) (float64, bool) {
	var mt, mx float64
	for i := range t {
		mt += t[i]
		mx += x[i]
	}
	mt /= float64(len(t))
	mx /= float64(len(t))
	var stt, stx float64
	for i := range t {
		stt += (t[i] - mt) * (t[i] - mt)
		stx += (t[i] - mt) * (x[i] - mx)
	}
	if !(stt > 0) {
		return math.NaN(), false
	}
	return stx / stt, true
}

func growF(s []float64, n int) []float64 {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]float64, n)
}

func growK(s []FitKind, n int) []FitKind {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]FitKind, n)
}

// WhitecapAnalyser accumulates the whitecaps of a record frame by frame.
// Create it with NewWhitecapAnalyser once the record's references are
// known, Add every frame in time order, then Finish. It is not safe for
// concurrent use.
type WhitecapAnalyser struct {
	g        tracking.Geometry
	ref      References
	opt      BreakingOptions
	finder   *tracking.PatchFinder
	scratch  *tracking.PatchScratch
	linker   *tracking.WhitecapLinker
	gate     tracking.ParentGate
	coverage []CoverageRow
	skipped  map[string]int
	small    int
	last     int
	seen     bool // a frame has been added (last is set)
	done     bool
}

// NewWhitecapAnalyser prepares the whitecap analysis of a record on grid g
// (g.Theta the direction of travel θ0) with the record's reference phase
// speeds.
func NewWhitecapAnalyser(g tracking.Geometry, ref References, opt BreakingOptions) (*WhitecapAnalyser, error) {
	if !(ref.PeakPhaseSpeed > 0) || math.IsInf(ref.PeakPhaseSpeed, 0) {
		return nil, fmt.Errorf("whitecap analysis needs the peak phase speed c_p; got %g m/s", ref.PeakPhaseSpeed)
	}
	if !(g.Dx > 0) || !(g.Dy > 0) {
		return nil, fmt.Errorf("whitecap analysis: grid spacing dx = %g m, dy = %g m is invalid; give positive spacings", g.Dx, g.Dy)
	}
	opt = opt.withDefaults(g, ref)
	if err := opt.validate(); err != nil {
		return nil, fmt.Errorf("whitecap analysis: %w", err)
	}
	finder, err := tracking.NewPatchFinder(g, tracking.WhitecapOptions{MinArea: opt.MinPatchArea, Step: opt.Step})
	if err != nil {
		return nil, err
	}
	pred := opt.PredictRatio * ref.PeakPhaseSpeed
	a := &WhitecapAnalyser{
		g: g, ref: ref, opt: opt, finder: finder, scratch: finder.NewScratch(),
		linker: tracking.NewWhitecapLinker(tracking.LinkOptions{
			MaxGapFrames: opt.MaxGapFrames,
			GateS:        opt.GateS,
			GateN:        opt.GateN,
			Speed:        func(tracking.Crest) float64 { return pred },
		}),
		gate:    tracking.ParentGate{AlongFraction: opt.ParentAlongFraction, Across: opt.ParentAcross},
		skipped: map[string]int{},
	}
	return a, nil
}

// Options returns the resolved options.
func (a *WhitecapAnalyser) Options() BreakingOptions { return a.opt }

// Add analyses one frame: frame is its number on the record's time axis
// (strictly increasing from call to call; gaps are missing frames), t its
// time in seconds, foam its foam mask (non-zero on whitecap cells), valid
// false where the elevation is unknown (nil: all known), crests the crest
// detections of the same frame (for tying whitecaps to crests; may be nil).
// A frame whose foam covers more than MaxFoamFraction of the known cells is
// skipped and counted.
func (a *WhitecapAnalyser) Add(frame int, t float64, foam []uint8, valid []bool, crests []tracking.Crest) error {
	if a.done {
		return errors.New("whitecap analysis: Add after Finish; start a new analyser")
	}
	n := a.g.Nx * a.g.Ny
	if foam == nil {
		return errors.New("whitecap analysis needs a foam mask for every frame; the record has no foam variable (give a file with foam(time, y, x) or detect foam from images first)")
	}
	if len(foam) != n || (valid != nil && len(valid) != n) {
		return fmt.Errorf("whitecap analysis: frame %d has a foam mask of %d cells (validity %d) but the %d×%d grid has %d; give masks of the record's grid", frame, len(foam), len(valid), a.g.Nx, a.g.Ny, n)
	}
	if a.seen && frame <= a.last {
		return fmt.Errorf("whitecap analysis: frame %d comes after frame %d; add frames in increasing order", frame, a.last)
	}
	if math.IsNaN(t) || math.IsInf(t, 0) {
		return fmt.Errorf("whitecap analysis: frame %d has time %g; give a finite time in seconds", frame, t)
	}
	a.last, a.seen = frame, true
	nf, nv := tracking.CountFoam(foam, valid)
	if nv == 0 {
		a.skipped["no known cells"]++
		return nil
	}
	if float64(nf) > a.opt.MaxFoamFraction*float64(nv) {
		a.skipped[SkipFoamSaturated]++
		return nil
	}
	patches, small, err := a.finder.Find(foam, valid, frame, t, a.scratch)
	if err != nil {
		return err
	}
	a.small += small
	for i := range patches {
		patches[i].TieToCrest(crests, a.gate)
	}
	a.linker.Push(frame, t, patches)
	a.coverage = append(a.coverage, CoverageRow{
		Frame: frame, Time: t, FoamCells: nf, ValidCells: nv,
		Coverage: float64(nf) / float64(nv), Area: float64(nv) * a.g.Dx * a.g.Dy,
	})
	return nil
}

type crestKey struct {
	frame int
	s, n  float64
}

// Finish closes the whitecap tracks and computes speeds, ratios and the
// breaking statistics. crestRows are the record's crest rows (TrackRows),
// used for the parent crests' track IDs, speeds and local phase speeds; nil
// leaves the parents' speeds unknown and takes their local phase speed
// from their own wavelength.
func (a *WhitecapAnalyser) Finish(crestRows []CrestRow) (*WhitecapResult, error) {
	if a.done {
		return nil, errors.New("whitecap analysis: Finish called twice")
	}
	a.done = true
	res := &WhitecapResult{Options: a.opt, FramesAnalysed: len(a.coverage), Skipped: a.skipped, SmallPatches: a.small, Coverage: a.coverage}
	tracks, stats := a.linker.Finish()
	unseen, _ := a.linker.Unlinked()
	res.Link, res.FrontsUnseen = stats, unseen
	if len(a.coverage) == 0 {
		return nil, fmt.Errorf("whitecap analysis: no frame had a usable foam mask (%d skipped as saturated, %d without known cells); check the foam variable", a.skipped[SkipFoamSaturated], a.skipped["no known cells"])
	}
	for _, c := range a.coverage {
		res.MeanCoverage += c.Coverage
	}
	res.MeanCoverage /= float64(len(a.coverage))
	area := make(map[int]float64, len(a.coverage))
	for _, c := range a.coverage {
		area[c.Frame] = c.Area
	}

	// Parent crest rows, looked up by frame and tip position.
	need := map[crestKey]int{}
	for _, tr := range tracks {
		for _, p := range tr.Patches {
			if p.Parent != nil {
				need[crestKey{p.Parent.Frame, p.Parent.S, p.Parent.N}] = -1
			}
		}
	}
	for i, r := range crestRows {
		k := crestKey{r.Frame, r.S, r.N}
		if _, ok := need[k]; ok {
			need[k] = i
		}
	}
	parentRow := func(p *tracking.Crest) *CrestRow {
		if p == nil {
			return nil
		}
		if i, ok := need[crestKey{p.Frame, p.S, p.N}]; ok && i >= 0 {
			return &crestRows[i]
		}
		return nil
	}

	half := a.opt.SpeedWindowS / 2
	cp := a.ref.PeakPhaseSpeed
	var ts, xs, v []float64
	var kind []FitKind
	var fronts []FrontSample
	for _, tr := range tracks {
		ts, xs = ts[:0], xs[:0]
		for _, p := range tr.Patches {
			ts = append(ts, p.Time)
			xs = append(xs, p.Front.Path)
		}
		v, kind = FrontSpeeds(ts, xs, half, a.opt.MinSpeedPoints, v, kind)
		first := len(res.Rows)
		for i, p := range tr.Patches {
			row := WhitecapRow{TrackID: tr.ID, Patch: p, FrontSpeed: v[i], Fit: kind[i], PhaseSpeedPeak: cp,
				PhaseSpeedLocal: math.NaN(), RatioPeak: v[i] / cp, RatioLocal: math.NaN(), ParentSteepness: math.NaN()}
			if p.Parent != nil {
				row.ParentSteepness = p.Parent.Steepness()
				row.PhaseSpeedLocal = a.ref.LocalPhaseSpeed(p.Parent.Wavelength)
				if cr := parentRow(p.Parent); cr != nil {
					row.ParentTrackID = cr.TrackID
					row.PhaseSpeedLocal = cr.PhaseSpeedLocal
				}
				row.RatioLocal = v[i] / row.PhaseSpeedLocal
			}
			if math.IsNaN(v[i]) {
				res.LengthWithoutSpeed += p.FrontLength
			} else if p.FrontLength > 0 {
				fronts = append(fronts, FrontSample{Speed: v[i], Length: p.FrontLength, Area: area[p.Frame]})
			}
			res.Rows = append(res.Rows, row)
		}
		res.Whitecaps = append(res.Whitecaps, summarise(res.Rows[first:], area, parentRow))
	}
	res.LengthWithoutSpeed /= float64(len(a.coverage))
	st, err := Breaking(fronts, len(a.coverage), a.opt.BinWidth, a.opt.MaxSpeed, a.opt.BreakingParameter, a.opt.WaterDensity)
	if err != nil {
		return nil, fmt.Errorf("whitecap analysis: %w", err)
	}
	res.Breaking = st
	return res, nil
}

// summarise describes one whitecap track from its rows.
func summarise(rows []WhitecapRow, analysed map[int]float64, parentRow func(*tracking.Crest) *CrestRow) Whitecap {
	r0, r1 := rows[0], rows[len(rows)-1]
	_, prevAnalysed := analysed[r0.Frame-1]
	w := Whitecap{
		TrackID: r0.TrackID, FirstFrame: r0.Frame, LastFrame: r1.Frame, Start: r0.Time, End: r1.Time, Rows: len(rows),
		OnsetSeen:    prevAnalysed && !r0.Edge && r0.CensoredLines == 0,
		ParentDelayS: math.NaN(), ParentSteepness: math.NaN(), ParentCrestSpeed: math.NaN(),
		ParentRatioPeak: math.NaN(), ParentRatioLocal: math.NaN(),
	}
	var sp, rp, rl []float64
	for _, r := range rows {
		w.MaxArea = math.Max(w.MaxArea, r.Area)
		w.MaxFrontLength = math.Max(w.MaxFrontLength, r.FrontLength)
		if !math.IsNaN(r.FrontSpeed) {
			sp = append(sp, r.FrontSpeed)
			rp = append(rp, r.RatioPeak)
			if !math.IsNaN(r.RatioLocal) {
				rl = append(rl, r.RatioLocal)
			}
		}
	}
	w.MedianSpeed, w.MedianRatioPeak, w.MedianRatioLocal = median(sp), median(rp), median(rl)
	w.TrackSpeed = math.NaN()
	if len(rows) >= 3 {
		ts := make([]float64, len(rows))
		xs := make([]float64, len(rows))
		for i, r := range rows {
			ts[i], xs[i] = r.Time, r.Front.Path
		}
		if v, ok := lineSlope(ts, xs); ok {
			w.TrackSpeed = v
		}
	}
	for _, r := range rows {
		if r.Parent == nil {
			continue
		}
		w.ParentDelayS = r.Time - r0.Time
		w.ParentSteepness = r.ParentSteepness
		w.ParentTrackID = r.ParentTrackID
		if cr := parentRow(r.Parent); cr != nil {
			w.ParentCrestSpeed, w.ParentRatioPeak, w.ParentRatioLocal = cr.CrestSpeed, cr.RatioPeak, cr.RatioLocal
		}
		break
	}
	return w
}

// SortWhitecapRows orders rows by time, then track ID (the order of the
// crest rows' CSV); Finish returns them grouped by track.
func SortWhitecapRows(rows []WhitecapRow) {
	sort.SliceStable(rows, func(i, j int) bool {
		if rows[i].Time != rows[j].Time {
			return rows[i].Time < rows[j].Time
		}
		return rows[i].TrackID < rows[j].TrackID
	})
}
