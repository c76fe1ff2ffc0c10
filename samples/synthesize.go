package samples

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"time"

	"crestspeed/ingest"
	"crestspeed/internal/atomicfile"
	"crestspeed/speed"
)

// Kinds of synthetic sea.
const (
	KindRegular = "regular"
	KindJONSWAP = "jonswap"
	KindPacket  = "packet"
)

// GridSpec is the analysis grid and time base of a synthetic record.
type GridSpec struct {
	Nx       int     `json:"nx" yaml:"nx"`
	Ny       int     `json:"ny" yaml:"ny"`
	DxM      float64 `json:"dx_m" yaml:"dx_m"`
	DyM      float64 `json:"dy_m" yaml:"dy_m"`
	X0M      float64 `json:"x0_m" yaml:"x0_m"` // centre of the first cell
	Y0M      float64 `json:"y0_m" yaml:"y0_m"`
	FPS      float64 `json:"frame_rate_hz" yaml:"frame_rate_hz"`
	Duration float64 `json:"duration_s" yaml:"duration_s"`
	Start    string  `json:"start_utc" yaml:"start_utc"` // RFC 3339; the epoch of the time axis
}

// Validate reports the first absurd setting.
func (g GridSpec) Validate() error {
	switch {
	case g.Nx < 4 || g.Ny < 4 || g.Nx > 8192 || g.Ny > 8192:
		return fmt.Errorf("grid of %d×%d cells is outside 4–8192 per side", g.Nx, g.Ny)
	case !(g.DxM > 0) || !(g.DyM > 0):
		return fmt.Errorf("grid spacing must be positive, got dx = %g m, dy = %g m", g.DxM, g.DyM)
	case !(g.FPS > 0) || g.FPS > 1000:
		return fmt.Errorf("frame rate %g Hz is outside (0, 1000]", g.FPS)
	case !(g.Duration > 0):
		return fmt.Errorf("record duration must be positive, got %g s", g.Duration)
	case g.Duration*g.FPS < 2:
		return fmt.Errorf("a record of %g s at %g Hz holds fewer than two frames", g.Duration, g.FPS)
	}
	if g.Start != "" {
		if _, err := time.Parse(time.RFC3339, g.Start); err != nil {
			return fmt.Errorf("start time %q is not RFC 3339 (like 2026-06-14T09:00:00Z)", g.Start)
		}
	}
	return nil
}

// Axes returns the cell-centre coordinates.
func (g GridSpec) Axes() (xs, ys []float64) {
	xs = make([]float64, g.Nx)
	ys = make([]float64, g.Ny)
	for i := range xs {
		xs[i] = g.X0M + float64(i)*g.DxM
	}
	for i := range ys {
		ys[i] = g.Y0M + float64(i)*g.DyM
	}
	return
}

// Frames returns the number of frames of the record.
func (g GridSpec) Frames() int { return int(math.Floor(g.Duration*g.FPS + 1e-9)) }

// Scenario is one synthetic record: a sea, its grid, and deliberate defects
// used to exercise the handling of bad data.
type Scenario struct {
	Site    string         `json:"site" yaml:"site"`
	Kind    string         `json:"kind" yaml:"kind"`
	Regular RegularWave    `json:"regular,omitempty" yaml:"regular"`
	JONSWAP JONSWAPSea     `json:"jonswap,omitempty" yaml:"jonswap"`
	Packet  FocusingPacket `json:"packet,omitempty" yaml:"packet"`
	Grid    GridSpec       `json:"grid" yaml:"grid"`
	Defects Defects        `json:"defects" yaml:"defects"`
	Foam    FoamSpec       `json:"foam,omitempty" yaml:"foam"`
}

// DefaultScenario is the synthetic record "crestspeed synthesize" writes
// when nothing is configured: a directional JONSWAP sea at an invented site,
// five minutes at 10 Hz on a 192 m × 128 m grid of 1 m cells. The other
// kinds' settings are the defaults used when the kind is chosen.
func DefaultScenario() Scenario {
	return Scenario{
		Site:    "Orsund Bank research platform (invented)",
		Kind:    KindJONSWAP,
		Regular: RegularWave{HeightM: 1, PeriodS: 6, DirectionDeg: 20},
		JONSWAP: JONSWAPSea{HsM: 1.5, TpS: 6, Gamma: 3.3, Spreading: 10, DirectionDeg: 20, Seed: 1,
			Components: 256, FMinRatio: 0.5, FMaxRatio: 3},
		Packet: FocusingPacket{CentrePeriodS: 5, Bandwidth: 0.25, FocusXM: 60, FocusYM: 30, FocusTimeS: 20,
			FocusEtaM: 0.6, Components: 64},
		Grid: GridSpec{Nx: 192, Ny: 128, DxM: 1, DyM: 1, FPS: 10, Duration: 300, Start: "2026-06-14T09:00:00Z"},
		Foam: FoamSpec{Auto: AutoFoam{MinSteepness: 0.2, SpeedRatio: 0.8}},
	}
}

// BenchmarkSea is the record the benchmarks of every stage read: a
// directional JONSWAP sea (Hs 1.5 m, Tp 6 s, s = 10) on 512×512 cells of
// 0.5 m at 10 Hz, frames long.
func BenchmarkSea(frames int) Scenario {
	return Scenario{Kind: KindJONSWAP,
		JONSWAP: JONSWAPSea{HsM: 1.5, TpS: 6, Gamma: 3.3, Spreading: 10, DirectionDeg: 25, Seed: 1, Components: 256, FMaxRatio: 3},
		Grid:    GridSpec{Nx: 512, Ny: 512, DxM: 0.5, DyM: 0.5, FPS: 10, Duration: float64(frames) / 10},
	}
}

// Defects are deliberate faults written into a synthetic record.
type Defects struct {
	DropFrames []int `json:"drop_frames,omitempty" yaml:"drop_frames"` // frame numbers left out of the file
	// MaskBlocks is the number of square blocks of cells set to NaN in every
	// frame (placed at seeded random positions), each MaskBlockCells wide.
	MaskBlocks     int    `json:"mask_blocks,omitempty" yaml:"mask_blocks"`
	MaskBlockCells int    `json:"mask_block_cells,omitempty" yaml:"mask_block_cells"`
	MaskSeed       uint64 `json:"mask_seed,omitempty" yaml:"mask_seed"`
	NaNFrames      []int  `json:"nan_frames,omitempty" yaml:"nan_frames"` // frames written entirely NaN
}

// Truth is what the generator knows about a synthetic record, written as
// JSON beside it.
type Truth struct {
	Scenario         Scenario       `json:"scenario"`
	DepthM           float64        `json:"depth_m"`
	Hm0M             float64        `json:"hm0_m"`                // 4√(Σ a²/2) of the components
	PeakPeriodS      float64        `json:"peak_period_s"`        // period of the spectral peak (absolute)
	PeakPhaseSpeed   float64        `json:"peak_phase_speed_mps"` // nominal phase speed at the peak, along the mean direction
	MeanDirectionDeg float64        `json:"mean_direction_deg"`
	Frames           int            `json:"frames_written"`
	MaskedFraction   float64        `json:"masked_fraction"`
	Components       []Component    `json:"components"`
	Generated        string         `json:"generator"`
	Whitecaps        *WhitecapTruth `json:"whitecaps,omitempty"`
}

// Validate reports the first reason the scenario cannot be synthesized.
func (s Scenario) Validate() error {
	_, _, err := s.prepare()
	return err
}

// prepare checks the scenario and builds its sea and truth.
func (s Scenario) prepare() (*LinearSea, Truth, error) {
	if err := s.Grid.Validate(); err != nil {
		return nil, Truth{}, err
	}
	sea, err := s.Sea()
	if err != nil {
		return nil, Truth{}, err
	}
	truth, err := s.truth(sea)
	if err != nil {
		return nil, Truth{}, err
	}
	// Components shorter than two grid cells alias onto longer waves.
	if kmax := sea.MaxWavenumber(); kmax > math.Pi/math.Max(s.Grid.DxM, s.Grid.DyM) {
		return nil, Truth{}, fmt.Errorf("the sea has waves %.2f m long but the grid spacing (%g m) resolves only waves longer than %.2f m; use a finer grid or a lower highest frequency",
			2*math.Pi/kmax, math.Max(s.Grid.DxM, s.Grid.DyM), 2*math.Max(s.Grid.DxM, s.Grid.DyM))
	}
	return sea, truth, nil
}

// Sea builds the scenario's LinearSea.
func (s Scenario) Sea() (*LinearSea, error) {
	switch s.Kind {
	case KindRegular:
		return s.Regular.Sea()
	case KindJONSWAP:
		return s.JONSWAP.Sea()
	case KindPacket:
		return s.Packet.Sea()
	}
	return nil, fmt.Errorf("unknown sea kind %q; use %q, %q or %q", s.Kind, KindRegular, KindJONSWAP, KindPacket)
}

func (s Scenario) depth() float64 {
	switch s.Kind {
	case KindRegular:
		return s.Regular.DepthM
	case KindJONSWAP:
		return s.JONSWAP.DepthM
	}
	return s.Packet.DepthM
}

// truth derives the known figures of the scenario.
func (s Scenario) truth(sea *LinearSea) (Truth, error) {
	t := Truth{Scenario: s, DepthM: s.depth(), Hm0M: 4 * math.Sqrt(sea.Variance()), Components: sea.Components}
	var cur speed.Current
	switch s.Kind {
	case KindRegular:
		t.PeakPeriodS, t.MeanDirectionDeg, cur = s.Regular.PeriodS, s.Regular.DirectionDeg, s.Regular.Current
	case KindJONSWAP:
		t.PeakPeriodS, t.MeanDirectionDeg, cur = s.JONSWAP.TpS, s.JONSWAP.DirectionDeg, s.JONSWAP.Current
	case KindPacket:
		t.PeakPeriodS, t.MeanDirectionDeg = s.Packet.CentrePeriodS, s.Packet.DirectionDeg
	}
	c, err := speed.PhaseSpeedFromPeriod(t.PeakPeriodS, t.DepthM, cur, t.MeanDirectionDeg*math.Pi/180, 0)
	if err != nil {
		return t, err
	}
	t.PeakPhaseSpeed = c
	return t, nil
}

// Progress is told how many frames are done out of how many.
type Progress func(done, total int)

// Synthesize writes the scenario as an elevation-map NetCDF file at path and
// its truth as JSON at path with the extension replaced by ".truth.json".
// Both files appear complete or not at all. The same scenario gives the same
// bytes of data whatever the worker count.
func Synthesize(ctx context.Context, s Scenario, path string, deflate, workers int, progress Progress) (Truth, error) {
	sea, truth, err := s.prepare()
	if err != nil {
		return Truth{}, err
	}
	start := s.Grid.Start
	if start == "" {
		start = "2026-06-14T09:00:00Z"
	}
	st, _ := time.Parse(time.RFC3339, start)
	xs, ys := s.Grid.Axes()
	grid := ingest.Grid{X: xs, Y: ys}
	foam, foamTruth, err := s.Foam.setupFoam(s, sea, xs, ys)
	if err != nil {
		return Truth{}, err
	}
	w, err := ingest.CreateElevation(path, grid, ingest.WriteOptions{
		Deflate:   deflate,
		TimeUnits: "seconds since " + st.UTC().Format("2006-01-02T15:04:05Z"),
		DepthM:    truth.DepthM,
		WithFoam:  foam != nil,
		Title:     "crestspeed synthetic sea surface elevation (" + s.Kind + ")",
		Attrs: map[string]string{
			"source":  "crestspeed synthesize: linear superposition of free wave components",
			"site":    s.Site,
			"comment": "Synthetic data with known truth; see the .truth.json file beside this one.",
		},
	})
	if err != nil {
		return Truth{}, err
	}
	defer w.Abort()

	mask := s.Defects.maskCells(s.Grid.Nx, s.Grid.Ny)
	drop := map[int]bool{}
	for _, i := range s.Defects.DropFrames {
		drop[i] = true
	}
	nanFrame := map[int]bool{}
	for _, i := range s.Defects.NaNFrames {
		nanFrame[i] = true
	}
	eval := NewFrameEvaluator(sea, xs, ys, workers)
	buf := make([]float32, s.Grid.Nx*s.Grid.Ny)
	var foamBuf []uint8
	if foam != nil {
		foamBuf = make([]uint8, len(buf))
	}
	total := s.Grid.Frames()
	nan := float32(math.NaN())
	for i := 0; i < total; i++ {
		if err := ctx.Err(); err != nil {
			return Truth{}, err
		}
		if drop[i] {
			continue
		}
		tt := float64(i) / s.Grid.FPS
		if err := eval.Frame(tt, buf); err != nil {
			return Truth{}, err
		}
		for _, c := range mask {
			buf[c] = nan
		}
		if nanFrame[i] {
			for j := range buf {
				buf[j] = nan
			}
		}
		if foam != nil {
			foam.Paint(i, tt, foamBuf)
		}
		if err := w.WriteFrame(tt, buf, foamBuf); err != nil {
			return Truth{}, err
		}
		truth.Frames++
		if progress != nil {
			progress(i+1, total)
		}
	}
	truth.MaskedFraction = float64(len(mask)) / float64(len(buf))
	truth.Generated = "crestspeed samples.Synthesize"
	truth.Whitecaps = foamTruth
	if err := writeJSONAtomic(TruthPath(path), truth); err != nil {
		return Truth{}, err
	}
	if err := w.Commit(); err != nil {
		os.Remove(TruthPath(path))
		return Truth{}, err
	}
	return truth, nil
}

// TruthPath is where the truth of the record at path is written.
func TruthPath(path string) string {
	ext := filepath.Ext(path)
	return path[:len(path)-len(ext)] + ".truth.json"
}

// ReadTruth reads a truth file written by Synthesize.
func ReadTruth(path string) (Truth, error) {
	var t Truth
	b, err := os.ReadFile(path)
	if err != nil {
		return t, err
	}
	if err := json.Unmarshal(b, &t); err != nil {
		return t, fmt.Errorf("%s is not a crestspeed truth file: %v", path, err)
	}
	return t, nil
}

func (d Defects) maskCells(nx, ny int) []int {
	if d.MaskBlocks <= 0 {
		return nil
	}
	b := d.MaskBlockCells
	if b <= 0 {
		b = max(nx/10, 1)
	}
	b = min(b, nx, ny)
	// A small deterministic generator keeps the mask independent of math/rand versions.
	state := d.MaskSeed*6364136223846793005 + 1442695040888963407
	next := func(n int) int {
		state = state*6364136223846793005 + 1442695040888963407
		return int((state >> 33) % uint64(n))
	}
	set := map[int]bool{}
	for k := 0; k < d.MaskBlocks; k++ {
		x0, y0 := next(nx-b+1), next(ny-b+1)
		for iy := y0; iy < y0+b; iy++ {
			for ix := x0; ix < x0+b; ix++ {
				set[iy*nx+ix] = true
			}
		}
	}
	cells := make([]int, 0, len(set))
	for iy := 0; iy < ny; iy++ {
		for ix := 0; ix < nx; ix++ {
			if set[iy*nx+ix] {
				cells = append(cells, iy*nx+ix)
			}
		}
	}
	return cells
}

func writeJSONAtomic(path string, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.WriteFile(path, append(b, '\n'))
}
