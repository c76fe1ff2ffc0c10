package samples

// Synthetic stereo deployments.
//
// A deployment is what a field rig leaves on disk, made here with known
// truth: chessboard calibration pairs, a time series of stereo frames of a
// synthetic sea, the true rig (with its pose above the mean sea plane) and
// the true sea-surface elevation on an analysis grid in the world frame, so
// that every stage from calibration to crest speeds can be checked against
// what it should find.

import (
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"image"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"sync"
	"time"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/internal/atomicfile"
	"crestspeed/speed"
)

// Deployment describes a synthetic stereo deployment. The zero values of
// the optional fields take the defaults given beside them.
type Deployment struct {
	Site     string `json:"site" yaml:"site"`           // invented site name
	StartUTC string `json:"start_utc" yaml:"start_utc"` // RFC 3339 instant of frame 0; default 2026-09-17T10:00:00Z

	// Pose of the left camera above the mean sea plane (see
	// calib.PlaneFromPose).
	HeightM       float64 `json:"height_m" yaml:"height_m"`
	DepressionDeg float64 `json:"depression_deg" yaml:"depression_deg"`
	RollDeg       float64 `json:"roll_deg" yaml:"roll_deg"`

	// Rig holds the cameras and their relative pose; its SeaPlane is
	// replaced by the pose above. Default DemoRig().
	Rig *calib.Rig `json:"-" yaml:"-"`
	// ImageSize, when set and different from the rig's, rescales the
	// rig's focal lengths and principal points to it (see ScaleRig).
	ImageSize image.Point `json:"image_size" yaml:"image_size"`

	// Sea gives the kind and parameters of the sea; its Grid is filled in
	// by WriteDeployment (analysis grid and time base) and it must have no
	// Defects.
	Sea Scenario `json:"sea" yaml:"sea"`

	Frames int     `json:"frames" yaml:"frames"`               // stereo frames to render, at least 2
	FPS    float64 `json:"frame_rate_hz" yaml:"frame_rate_hz"` // frame rate, default 10

	CalibrationViews int        `json:"calibration_views" yaml:"calibration_views"` // chessboard pairs, default 12
	Board            Chessboard `json:"board" yaml:"board"`                         // default DemoChessboard()

	Render RenderOptions `json:"render" yaml:"render"`
	// Foam paints whitecap patches on the rendered surface (shaded by
	// FoamShading, see render_foam.go) and writes their true mask as the
	// foam variable of truth_elevation.nc; automatic foam needs a
	// focusing-packet sea.
	Foam        FoamSpec    `json:"foam,omitempty" yaml:"foam"`
	FoamShading FoamShading `json:"foam_shading,omitempty" yaml:"foam_shading"`
	// AnalysisSpacingM is the cell size of the truth grid, default 0.25 m.
	AnalysisSpacingM float64 `json:"analysis_spacing_m" yaml:"analysis_spacing_m"`
	// Seed seeds the sensor noise, the roughness and the chessboard poses;
	// it replaces the seeds in Render.
	Seed uint64 `json:"seed" yaml:"seed"`
}

// DemoDeployment is the deployment of the demo: an invented research
// platform, the demo rig 13.5 m above the water looking 30° down, a
// JONSWAP sea of Hs 1.3 m and Tp 5.6 s running toward the rig, 60 frames
// at 10 Hz of 1280×1024 pixels and 12 chessboard pairs.
func DemoDeployment() Deployment {
	const site = "Orsund Bank research platform (invented)"
	return Deployment{
		Site:          site,
		StartUTC:      "2026-09-17T10:00:00Z",
		HeightM:       13.5,
		DepressionDeg: 30,
		RollDeg:       0.6,
		Rig:           DemoRig(),
		Sea: Scenario{
			Site: site,
			Kind: KindJONSWAP,
			JONSWAP: JONSWAPSea{
				HsM: 1.3, TpS: 5.6, Gamma: 3.3, Spreading: 12, DirectionDeg: 195,
				Seed: 20260917, Components: 128,
			},
		},
		Frames:           60,
		FPS:              10,
		CalibrationViews: 12,
		Board:            DemoChessboard(),
		AnalysisSpacingM: 0.25,
		Seed:             7,
	}
}

// DeploymentTruth is what WriteDeployment knows about the deployment it
// wrote. Its JSON form (truth_elevation.truth.json) holds the fields of
// [Truth] at the top level, so ReadTruth reads it too.
type DeploymentTruth struct {
	Truth
	Site          string  `json:"site"`
	StartUTC      string  `json:"start_utc"`
	HeightM       float64 `json:"camera_height_m"`
	DepressionDeg float64 `json:"depression_deg"`
	RollDeg       float64 `json:"roll_deg"`
	BaselineM     float64 `json:"baseline_m"`
	ImageWidth    int     `json:"image_width_px"`
	ImageHeight   int     `json:"image_height_px"`
	FPS           float64 `json:"frame_rate_hz"`
	// AnalysisGrid says how the truth grid was chosen.
	AnalysisGrid string `json:"analysis_grid"`
	// The roughness added to the rendered surface and left out of the
	// truth elevation: its settings, RMS height and RMS slope (from its
	// components) and the components themselves.
	Roughness           Roughness     `json:"roughness"`
	RoughnessRMSM       float64       `json:"roughness_rms_m"`
	RoughnessRMSSlope   float64       `json:"roughness_rms_slope"`
	RoughnessComponents []Component   `json:"roughness_components"`
	Render              RenderOptions `json:"render"`
	// Files written, relative to the deployment folder.
	CalibrationLeft  []string `json:"calibration_left"`
	CalibrationRight []string `json:"calibration_right"`
	FramesLeft       []string `json:"frames_left"`
	FramesRight      []string `json:"frames_right"`
	// RenderSeconds is the wall time of the frame rendering (not written
	// to the JSON file, which depends only on the settings).
	RenderSeconds float64 `json:"-"`
}

// Names of the files of a deployment folder.
const (
	DeploymentCalibrationDir = "calibration"
	DeploymentFramesDir      = "frames"
	DeploymentTimestamps     = "timestamps.csv"
	DeploymentRig            = "rig_truth.yaml"
	DeploymentTruthElevation = "truth_elevation.nc"
)

// ScaleRig returns a copy of rig for images of the given size: focal
// lengths scale with the size and the principal point with it about the
// image's outer corner (pixel centres at integer coordinates), so every
// ray keeps its direction; distortion, rotation, baseline and sea plane
// are unchanged.
func ScaleRig(rig *calib.Rig, size image.Point) *calib.Rig {
	out := *rig
	sx := float64(size.X) / float64(rig.Size.X)
	sy := float64(size.Y) / float64(rig.Size.Y)
	scale := func(c calib.Camera) calib.Camera {
		c.Fx *= sx
		c.Fy *= sy
		c.Cx = (c.Cx+0.5)*sx - 0.5
		c.Cy = (c.Cy+0.5)*sy - 0.5
		return c
	}
	out.Size = size
	out.Left, out.Right = scale(rig.Left), scale(rig.Right)
	if rig.SeaPlane != nil {
		p := *rig.SeaPlane
		out.SeaPlane = &p
	}
	out.Quality = nil
	return &out
}

// withDefaults fills the defaults and checks the settings.
func (d Deployment) withDefaults() (Deployment, error) {
	if d.Rig == nil {
		d.Rig = DemoRig()
	}
	if d.ImageSize != (image.Point{}) && d.ImageSize != d.Rig.Size {
		if d.ImageSize.X < 16 || d.ImageSize.Y < 16 || d.ImageSize.X > 1<<14 || d.ImageSize.Y > 1<<14 {
			return d, fmt.Errorf("deployment image size %d×%d px is outside 16–16384 per side", d.ImageSize.X, d.ImageSize.Y)
		}
		d.Rig = ScaleRig(d.Rig, d.ImageSize)
	}
	d.ImageSize = d.Rig.Size
	if d.StartUTC == "" {
		d.StartUTC = "2026-09-17T10:00:00Z"
	}
	if d.FPS == 0 {
		d.FPS = 10
	}
	if d.CalibrationViews == 0 {
		d.CalibrationViews = 12
	}
	if d.Board == (Chessboard{}) {
		d.Board = DemoChessboard()
	}
	if d.AnalysisSpacingM == 0 {
		d.AnalysisSpacingM = 0.25
	}
	if d.Site == "" {
		d.Site = d.Sea.Site
	}
	if d.Sea.Site == "" {
		d.Sea.Site = d.Site
	}
	st, err := time.Parse(time.RFC3339, d.StartUTC)
	if err != nil {
		return d, fmt.Errorf("deployment start time %q is not RFC 3339 (like 2026-09-17T10:00:00Z)", d.StartUTC)
	}
	d.StartUTC = st.UTC().Format(time.RFC3339)
	switch {
	case d.Site == "":
		return d, fmt.Errorf("deployment needs a site name (an invented one for synthetic data)")
	case !(d.HeightM >= 1 && d.HeightM <= 500):
		return d, fmt.Errorf("camera height %g m is outside 1–500 m", d.HeightM)
	case !(d.DepressionDeg > 0 && d.DepressionDeg < 89):
		return d, fmt.Errorf("camera depression %g° is outside (0, 89)°; the rig must look down at the sea, not straight down", d.DepressionDeg)
	case !(math.Abs(d.RollDeg) <= 45):
		return d, fmt.Errorf("camera roll %g° is outside ±45°", d.RollDeg)
	case d.Frames < 2 || d.Frames > 1000000:
		return d, fmt.Errorf("number of frames %d is outside 2–1000000", d.Frames)
	case !(d.FPS > 0 && d.FPS <= 1000):
		return d, fmt.Errorf("frame rate %g Hz is outside (0, 1000]", d.FPS)
	case d.CalibrationViews < 1 || d.CalibrationViews > 99:
		return d, fmt.Errorf("number of calibration views %d is outside 1–99", d.CalibrationViews)
	case !(d.AnalysisSpacingM >= 0.01 && d.AnalysisSpacingM <= 10):
		return d, fmt.Errorf("analysis grid spacing %g m is outside 0.01–10 m", d.AnalysisSpacingM)
	case len(d.Sea.Defects.DropFrames)+len(d.Sea.Defects.NaNFrames)+d.Sea.Defects.MaskBlocks > 0:
		return d, fmt.Errorf("a rendered deployment cannot carry elevation-map defects; remove sea.defects")
	}
	if err := d.Board.Validate(); err != nil {
		return d, err
	}
	plane := calib.PlaneFromPose(d.HeightM, d.DepressionDeg, d.RollDeg)
	rig := *d.Rig
	rig.SeaPlane = &plane
	if err := rig.Validate(); err != nil {
		return d, fmt.Errorf("deployment rig: %v", err)
	}
	d.Rig = &rig
	d.Render.Seed = d.Seed
	d.Render.Roughness.Seed = d.Seed
	d.Render.Roughness.Current = d.Sea.current()
	return d, nil
}

// current returns the uniform current of the scenario's sea.
func (s Scenario) current() speed.Current {
	switch s.Kind {
	case KindRegular:
		return s.Regular.Current
	case KindJONSWAP:
		return s.JONSWAP.Current
	}
	return speed.Current{}
}

// FrameName returns the file name of one camera's image at time t seconds
// after the start: the time in whole milliseconds, nine digits.
func FrameName(side Side, t float64) string {
	return fmt.Sprintf("%s_%09d.png", side, int64(math.Round(t*1000)))
}

// WriteDeployment renders the deployment d into the folder dir, which must
// not exist or be empty:
//
//	calibration/left_NN.png, right_NN.png   chessboard pairs (RenderCalibrationViews)
//	frames/left_<ms>.png, right_<ms>.png    stereo frames, time in ms since the start
//	frames/timestamps.csv                   frame, time_s, left, right
//	rig_truth.yaml                          the true rig with its sea plane
//	truth_elevation.nc                      true η(t, y, x) on the analysis grid
//	truth_elevation.truth.json              the truth of the sea and the render
//
// Every file appears complete or not at all; after an error the folder
// holds only complete files, and must be emptied before a new attempt.
// The truth elevation is the sea of d.Sea alone, without the rendering's
// roughness; the analysis grid is the largest rectangle of the world (x, y) lattice of spacing
// AnalysisSpacingM whose points are seen by both cameras at least 4 % of
// the image width inside every image edge, whether the water there stands
// at the mean level or Hm0 above or below it. Frames are rendered by
// workers goroutines (≤ 0: one) and the files are the same whatever their
// number. progress, when not nil, is told how many of the calibration
// pairs plus frames are done.
func WriteDeployment(ctx context.Context, d Deployment, dir string, workers int, progress func(done, total int)) (*DeploymentTruth, error) {
	d, err := d.withDefaults()
	if err != nil {
		return nil, err
	}
	sea, err := d.Sea.Sea()
	if err != nil {
		return nil, err
	}
	if err := checkEmptyFolder(dir); err != nil {
		return nil, err
	}
	workers = max(workers, 1)
	rig := d.Rig
	r, err := NewRenderer(rig, sea, d.Render, workers)
	if err != nil {
		return nil, err
	}
	hm0 := 4 * math.Sqrt(sea.Variance())
	grid, err := analysisGrid(r, d.AnalysisSpacingM, hm0)
	if err != nil {
		return nil, err
	}
	if kmax := sea.MaxWavenumber(); kmax > math.Pi/d.AnalysisSpacingM {
		return nil, fmt.Errorf("the sea has waves %.2f m long but the analysis grid spacing (%g m) resolves only waves longer than %.2f m; lower analysis_spacing_m",
			2*math.Pi/kmax, d.AnalysisSpacingM, 2*d.AnalysisSpacingM)
	}
	d.Sea.Grid = GridSpec{
		Nx: len(grid.X), Ny: len(grid.Y), DxM: d.AnalysisSpacingM, DyM: d.AnalysisSpacingM,
		X0M: grid.X[0], Y0M: grid.Y[0], FPS: d.FPS, Duration: float64(d.Frames) / d.FPS, Start: d.StartUTC,
	}
	base, err := d.Sea.truth(sea)
	if err != nil {
		return nil, err
	}
	base.Generated = "crestspeed samples.WriteDeployment"
	foam, foamTruth, err := d.Foam.setupFoam(d.Sea, sea, grid.X, grid.Y)
	if err != nil {
		return nil, err
	}
	if foam != nil {
		if err := r.SetFoam(foamTruth.Patches, d.FoamShading); err != nil {
			return nil, err
		}
		base.Whitecaps = foamTruth
	}
	rough := r.Roughness()
	var rs2 float64
	for _, c := range rough.Components {
		rs2 += (c.Amp * c.K) * (c.Amp * c.K) / 2
	}
	truth := &DeploymentTruth{
		Truth: base, Site: d.Site, StartUTC: d.StartUTC,
		HeightM: d.HeightM, DepressionDeg: d.DepressionDeg, RollDeg: d.RollDeg,
		BaselineM: rig.Baseline(), ImageWidth: rig.Size.X, ImageHeight: rig.Size.Y, FPS: d.FPS,
		AnalysisGrid: fmt.Sprintf("largest rectangle of the %g m world lattice seen by both cameras at least %.0f px inside every image edge with the water at 0 and ±Hm0 (±%.2f m)",
			d.AnalysisSpacingM, analysisMarginFraction*float64(rig.Size.X), hm0),
		Roughness: r.opt.Roughness, RoughnessRMSM: math.Sqrt(rough.Variance()), RoughnessRMSSlope: math.Sqrt(rs2),
		RoughnessComponents: rough.Components, Render: r.opt,
	}
	total := d.CalibrationViews + d.Frames
	report := func(done int) {
		if progress != nil {
			progress(done, total)
		}
	}

	// The true rig.
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("cannot create deployment folder %s: %v", dir, err)
	}
	if err := rig.Save(filepath.Join(dir, DeploymentRig)); err != nil {
		return nil, err
	}
	// Calibration pairs.
	calDir := filepath.Join(dir, DeploymentCalibrationDir)
	lp, rp, err := RenderCalibrationViews(ctx, rig, d.Board, d.CalibrationViews, calDir, d.Seed)
	if err != nil {
		return nil, fmt.Errorf("calibration views: %v", err)
	}
	for i := range lp {
		truth.CalibrationLeft = append(truth.CalibrationLeft, filepath.ToSlash(filepath.Join(DeploymentCalibrationDir, filepath.Base(lp[i]))))
		truth.CalibrationRight = append(truth.CalibrationRight, filepath.ToSlash(filepath.Join(DeploymentCalibrationDir, filepath.Base(rp[i]))))
	}
	report(d.CalibrationViews)

	// Truth elevation file, written frame by frame beside the rendering.
	ncPath := filepath.Join(dir, DeploymentTruthElevation)
	st, _ := time.Parse(time.RFC3339, d.StartUTC)
	ew, err := ingest.CreateElevation(ncPath, grid, ingest.WriteOptions{
		TimeUnits: "seconds since " + st.UTC().Format("2006-01-02T15:04:05Z"),
		DepthM:    base.DepthM,
		WithFoam:  foam != nil,
		Title:     "crestspeed synthetic deployment: true sea-surface elevation",
		Attrs: map[string]string{
			"source":  "crestspeed samples.WriteDeployment: linear superposition of free wave components",
			"site":    d.Site,
			"comment": "Synthetic data with known truth, in the world frame of rig_truth.yaml (z up from the mean sea plane, x along the left camera's horizontal view direction, origin below the left camera). The rendering's small-scale roughness is not included; see the .truth.json file beside this one.",
		},
	})
	if err != nil {
		return nil, err
	}
	defer ew.Abort()
	framesDir := filepath.Join(dir, DeploymentFramesDir)
	if err := os.MkdirAll(framesDir, 0o755); err != nil {
		return nil, fmt.Errorf("cannot create frame folder %s: %v", framesDir, err)
	}
	eval := NewFrameEvaluator(sea, grid.X, grid.Y, workers)
	etaBuf := make([]float32, len(grid.X)*len(grid.Y))
	var foamBuf []uint8
	if foam != nil {
		foamBuf = make([]uint8, len(etaBuf))
	}

	// Frames: render in this goroutine, encode and write in two others,
	// with two pairs of image buffers in flight.
	type job struct {
		left, right  *image.Gray
		lname, rname string
	}
	free := make(chan [2]*image.Gray, 2)
	for range 2 {
		free <- [2]*image.Gray{
			image.NewGray(image.Rect(0, 0, rig.Size.X, rig.Size.Y)),
			image.NewGray(image.Rect(0, 0, rig.Size.X, rig.Size.Y)),
		}
	}
	jobs := make(chan job, 1)
	var writeErr error
	var errOnce sync.Once
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		for j := range jobs {
			var e [2]error
			var inner sync.WaitGroup
			inner.Add(2)
			go func() { defer inner.Done(); e[0] = writeGreyPNG(filepath.Join(framesDir, j.lname), j.left) }()
			go func() { defer inner.Done(); e[1] = writeGreyPNG(filepath.Join(framesDir, j.rname), j.right) }()
			inner.Wait()
			for _, err := range e {
				if err != nil {
					errOnce.Do(func() { writeErr = err })
				}
			}
			free <- [2]*image.Gray{j.left, j.right}
		}
	}()
	finish := func() error {
		close(jobs)
		wg.Wait()
		return writeErr
	}
	var surf *Surface
	rows := [][]string{{"frame", "time_s", "left", "right"}}
	t0 := time.Now()
	for i := 0; i < d.Frames; i++ {
		if err := ctx.Err(); err != nil {
			finish()
			return nil, err
		}
		t := float64(i) / d.FPS
		if surf, err = r.Surface(t, surf); err != nil {
			finish()
			return nil, err
		}
		bufs := <-free
		if _, _, err := r.RenderPair(ctx, surf, i, bufs[0], bufs[1]); err != nil {
			finish()
			return nil, err
		}
		ln, rn := FrameName(LeftSide, t), FrameName(RightSide, t)
		jobs <- job{left: bufs[0], right: bufs[1], lname: ln, rname: rn}
		if err := eval.Frame(t, etaBuf); err != nil {
			finish()
			return nil, err
		}
		if foam != nil {
			foam.Paint(i, t, foamBuf)
		}
		if err := ew.WriteFrame(t, etaBuf, foamBuf); err != nil {
			finish()
			return nil, err
		}
		rows = append(rows, []string{strconv.Itoa(i), strconv.FormatFloat(t, 'f', 6, 64), ln, rn})
		truth.FramesLeft = append(truth.FramesLeft, filepath.ToSlash(filepath.Join(DeploymentFramesDir, ln)))
		truth.FramesRight = append(truth.FramesRight, filepath.ToSlash(filepath.Join(DeploymentFramesDir, rn)))
		truth.Frames++
		report(d.CalibrationViews + i + 1)
	}
	if err := finish(); err != nil {
		return nil, err
	}
	truth.RenderSeconds = time.Since(t0).Seconds()
	var csvBuf bytes.Buffer
	cw := csv.NewWriter(&csvBuf)
	if err := cw.WriteAll(rows); err != nil {
		return nil, fmt.Errorf("cannot encode the timestamps: %v", err)
	}
	if err := atomicfile.WriteFile(filepath.Join(framesDir, DeploymentTimestamps), csvBuf.Bytes()); err != nil {
		return nil, err
	}
	if err := writeJSONAtomic(TruthPath(ncPath), truth); err != nil {
		return nil, fmt.Errorf("cannot write %s: %v", TruthPath(ncPath), err)
	}
	if err := ew.Commit(); err != nil {
		os.Remove(TruthPath(ncPath))
		return nil, err
	}
	return truth, nil
}

// checkEmptyFolder checks that dir does not exist or is empty.
func checkEmptyFolder(dir string) error {
	entries, err := os.ReadDir(dir)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return nil
	case err != nil:
		return fmt.Errorf("deployment folder %s cannot be read: %v", dir, err)
	case len(entries) > 0:
		return fmt.Errorf("deployment folder %s is not empty; give a new folder or empty this one", dir)
	}
	return nil
}

// analysisMarginFraction is the clearance from the image edges, as a
// fraction of the image width, that the analysis grid keeps.
const analysisMarginFraction = 0.04

// analysisGrid chooses the truth grid: on the world lattice of the given
// spacing (nodes at integer multiples of it) over the rendered sea grid, a
// node is covered when its vertical line, at the mean level and at ±hm0,
// projects into both images at least analysisMarginFraction of the width
// inside every edge; the grid is the largest axis-aligned rectangle of
// covered nodes (largest rectangle in a histogram, row by row of x; of
// equal areas the first found wins).
func analysisGrid(r *Renderer, spacing, hm0 float64) (ingest.Grid, error) {
	x0, y0, h, nx, ny := r.SeaGrid()
	x1, y1 := x0+float64(nx-1)*h, y0+float64(ny-1)*h
	i0, i1 := int(math.Ceil(x0/spacing)), int(math.Floor(x1/spacing))
	j0, j1 := int(math.Ceil(y0/spacing)), int(math.Floor(y1/spacing))
	mx, my := i1-i0+1, j1-j0+1
	if mx < 2 || my < 2 || float64(mx)*float64(my) > 64e6 {
		return ingest.Grid{}, fmt.Errorf("analysis grid spacing %g m does not suit a %.0f m × %.0f m footprint; choose a spacing between %.2g m and %.2g m", spacing, x1-x0, y1-y0, (x1-x0)/4000, (x1-x0)/4)
	}
	rig := r.rig
	w := r.world
	margin := analysisMarginFraction * float64(rig.Size.X)
	inside := func(p [2]float64) bool {
		return p[0] >= margin && p[1] >= margin && p[0] <= float64(rig.Size.X-1)-margin && p[1] <= float64(rig.Size.Y-1)-margin
	}
	covered := func(x, y float64) bool {
		for _, z := range []float64{-hm0, 0, hm0} {
			X := w.ToCamera([3]float64{x, y, z})
			if !(X[2] > 0) || !inside(rig.ProjectLeft(X)) {
				return false
			}
			if Xr := rig.RightFromLeft(X); !(Xr[2] > 0) || !inside(rig.ProjectRight(X)) {
				return false
			}
		}
		return true
	}
	// Histogram of covered runs along y, row by row of x.
	heights := make([]int, my)
	best, bi, bj0, bj1, bh := 0, 0, 0, 0, 0
	stack := make([]int, 0, my+1)
	for i := 0; i < mx; i++ {
		x := float64(i0+i) * spacing
		for j := 0; j < my; j++ {
			if covered(x, float64(j0+j)*spacing) {
				heights[j]++
			} else {
				heights[j] = 0
			}
		}
		// Largest rectangle under the histogram heights[0..my).
		stack = stack[:0]
		for j := 0; j <= my; j++ {
			hj := 0
			if j < my {
				hj = heights[j]
			}
			for len(stack) > 0 && heights[stack[len(stack)-1]] >= hj {
				top := stack[len(stack)-1]
				stack = stack[:len(stack)-1]
				left := 0
				if len(stack) > 0 {
					left = stack[len(stack)-1] + 1
				}
				if a := heights[top] * (j - left); a > best {
					best, bi, bj0, bj1, bh = a, i, left, j, heights[top]
				}
			}
			stack = append(stack, j)
		}
	}
	if bh < 4 || bj1-bj0 < 4 {
		return ingest.Grid{}, fmt.Errorf("the two cameras share too little of the sea for an analysis grid of %g m cells; check the rig's pose and baseline, or use a finer spacing", spacing)
	}
	g := ingest.Grid{X: make([]float64, bh), Y: make([]float64, bj1-bj0)}
	for k := range g.X {
		g.X[k] = float64(i0+bi-bh+1+k) * spacing
	}
	for k := range g.Y {
		g.Y[k] = float64(j0+bj0+k) * spacing
	}
	return g, nil
}
