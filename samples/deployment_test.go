package samples

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"image"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"crestspeed/calib"
	"crestspeed/ingest"
)

// tinyDeployment is a deployment small enough for a unit test: 160×128
// images, 3 frames and 2 chessboard pairs of a board of 2×2 inner corners
// with 0.6 m squares (so that its corners stay 12 px apart at that
// resolution).
func tinyDeployment() Deployment {
	d := DemoDeployment()
	d.ImageSize = image.Pt(160, 128)
	d.Frames = 3
	d.CalibrationViews = 2
	d.Board = Chessboard{Cols: 2, Rows: 2, SquareM: 0.6, MarginSquares: 0.25}
	d.Sea.JONSWAP.Components = 48
	d.AnalysisSpacingM = 0.5
	return d
}

func TestTinyDeployment(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "deployment")
	d := tinyDeployment()
	var calls int
	truth, err := WriteDeployment(context.Background(), d, dir, 2, func(done, total int) {
		calls++
		if total != d.Frames+d.CalibrationViews || done > total {
			t.Errorf("progress %d of %d", done, total)
		}
	})
	if err != nil {
		t.Fatal(err)
	}
	if calls == 0 {
		t.Error("progress was never reported")
	}
	// Every file exists.
	for _, f := range append(append(append(truth.CalibrationLeft, truth.CalibrationRight...), truth.FramesLeft...), truth.FramesRight...) {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Error(err)
		}
	}
	for _, f := range []string{"calibration/left_01.png", "calibration/right_02.png", "frames/left_000000000.png", "frames/right_000000200.png", "frames/timestamps.csv", "rig_truth.yaml", "truth_elevation.nc", "truth_elevation.truth.json"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Error(err)
		}
	}
	// No temporary files are left behind.
	filepath.WalkDir(dir, func(p string, e os.DirEntry, err error) error {
		if strings.Contains(p, ".part-") {
			t.Errorf("temporary file left: %s", p)
		}
		return nil
	})
	// timestamps.csv lists the frames in order; the names carry the time in ms.
	fh, err := os.Open(filepath.Join(dir, "frames", "timestamps.csv"))
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(fh).ReadAll()
	fh.Close()
	if err != nil {
		t.Fatal(err)
	}
	want := [][]string{
		{"frame", "time_s", "left", "right"},
		{"0", "0.000000", "left_000000000.png", "right_000000000.png"},
		{"1", "0.100000", "left_000000100.png", "right_000000100.png"},
		{"2", "0.200000", "left_000000200.png", "right_000000200.png"},
	}
	if len(rows) != len(want) {
		t.Fatalf("timestamps.csv has %d rows, want %d", len(rows), len(want))
	}
	for i := range want {
		if strings.Join(rows[i], ",") != strings.Join(want[i], ",") {
			t.Errorf("timestamps.csv row %d is %v, want %v", i, rows[i], want[i])
		}
	}
	// The frames have the deployment's size.
	f, err := os.Open(filepath.Join(dir, "frames", "right_000000100.png"))
	if err != nil {
		t.Fatal(err)
	}
	cfg, _, err := image.DecodeConfig(f)
	f.Close()
	if err != nil || cfg.Width != 160 || cfg.Height != 128 {
		t.Errorf("frame is %dx%d (%v), want 160x128", cfg.Width, cfg.Height, err)
	}
	// The truth elevation file reads back with the grid and frame count.
	src, err := ingest.OpenElevation(filepath.Join(dir, "truth_elevation.nc"), ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	m := src.Meta()
	if len(m.Times) != 3 || len(m.Grid.X) != truth.Scenario.Grid.Nx || len(m.Grid.Y) != truth.Scenario.Grid.Ny {
		t.Errorf("truth file has %d frames on %d×%d cells; truth JSON says 3 on %d×%d", len(m.Times), len(m.Grid.X), len(m.Grid.Y), truth.Scenario.Grid.Nx, truth.Scenario.Grid.Ny)
	}
	rt, err := ReadTruth(filepath.Join(dir, "truth_elevation.truth.json"))
	if err != nil {
		t.Fatal(err)
	}
	if rt.Frames != 3 || len(rt.Components) != 48 {
		t.Errorf("truth JSON records %d frames and %d components", rt.Frames, len(rt.Components))
	}
	// The analysis grid is seen by both cameras: its four corners, on the
	// mean plane, project inside both images (pinhole projection through
	// calib's camera model).
	rig, err := calib.LoadRig(filepath.Join(dir, "rig_truth.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	w, err := rig.SeaPlane.World()
	if err != nil {
		t.Fatal(err)
	}
	g := m.Grid
	for _, c := range [][2]float64{{g.X[0], g.Y[0]}, {g.X[len(g.X)-1], g.Y[0]}, {g.X[0], g.Y[len(g.Y)-1]}, {g.X[len(g.X)-1], g.Y[len(g.Y)-1]}} {
		X := w.ToCamera([3]float64{c[0], c[1], 0})
		for k, p := range [][2]float64{rig.ProjectLeft(X), rig.ProjectRight(X)} {
			if !(p[0] >= 0 && p[1] >= 0 && p[0] <= 159 && p[1] <= 127) {
				t.Errorf("analysis grid corner %v projects to %v, outside the %s image", c, p, Side(k))
			}
		}
	}
}

// TestRigTruthRoundTrip: the rig file of a deployment carries the sea
// plane of the pose exactly, and its world frame puts the left camera at
// (0, 0, H) (definition of the world frame, docs/methods.md "Stereo geometry").
func TestRigTruthRoundTrip(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "d")
	d := tinyDeployment()
	d.Frames = 2
	d.CalibrationViews = 1
	if _, err := WriteDeployment(context.Background(), d, dir, 1, nil); err != nil {
		t.Fatal(err)
	}
	rig, err := calib.LoadRig(filepath.Join(dir, "rig_truth.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	want := calib.PlaneFromPose(d.HeightM, d.DepressionDeg, d.RollDeg)
	if rig.SeaPlane == nil || *rig.SeaPlane != want {
		t.Fatalf("rig_truth.yaml has sea plane %+v, want %+v", rig.SeaPlane, want)
	}
	w, err := rig.SeaPlane.World()
	if err != nil {
		t.Fatal(err)
	}
	if c := w.ToWorld([3]float64{}); math.Abs(c[0]) > 1e-12 || math.Abs(c[1]) > 1e-12 || math.Abs(c[2]-d.HeightM) > 1e-12 {
		t.Errorf("left camera at %v in the world, want (0, 0, %g)", c, d.HeightM)
	}
	if rig.Size != image.Pt(160, 128) {
		t.Errorf("rig size %v, want 160×128", rig.Size)
	}
}

// TestTruthElevationNumpy recomputes the truth elevation of a tiny
// deployment with numpy from the components in its truth JSON (the linear
// superposition η = Σ a cos(k·(x − x0) − ω t + φ)) and compares it with
// what netCDF4 reads from the file (Debian python3-numpy, python3-netcdf4).
func TestTruthElevationNumpy(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "d")
	d := tinyDeployment()
	if _, err := WriteDeployment(context.Background(), d, dir, 2, nil); err != nil {
		t.Fatal(err)
	}
	const script = `
import json, sys
import numpy as np
from netCDF4 import Dataset
d = sys.argv[1]
tr = json.load(open(d + "/truth_elevation.truth.json"))
nc = Dataset(d + "/truth_elevation.nc")
x, y, tt = nc["x"][:], nc["y"][:], nc["time"][:]
eta = nc["eta"][:]
X, Y = np.meshgrid(x, y)
worst = 0.0
for i, t in enumerate(tt):
    e = np.zeros_like(X)
    for c in tr["components"]:
        kx, ky = c["wavenumber_rad_per_m"] * np.cos(c["direction_rad"]), c["wavenumber_rad_per_m"] * np.sin(c["direction_rad"])
        e += c["amplitude_m"] * np.cos(kx * X + ky * Y - c["omega_rad_per_s"] * t + c["phase_rad"])
    worst = max(worst, float(np.max(np.abs(e - eta[i]))))
print(json.dumps({"worst": worst, "frames": len(tt), "rms": float(np.sqrt(np.mean(eta**2)))}))
`
	out, err := exec.Command("/usr/bin/python3", "-c", script, dir).Output()
	if err != nil {
		t.Skipf("Debian python3 with numpy and netCDF4 is not available: %v", err)
	}
	var res struct {
		Worst, RMS float64
		Frames     int
	}
	if err := json.Unmarshal(out, &res); err != nil {
		t.Fatalf("cannot read python output %q: %v", out, err)
	}
	// float32 storage of values of order 1 m: 1e-6 m is a few ulps.
	if res.Frames != 3 || res.Worst > 1e-5 || !(res.RMS > 0.1) {
		t.Errorf("numpy: %d frames, largest difference %.3g m, RMS %.3g m; want 3 frames within 1e-5 m and a sea", res.Frames, res.Worst, res.RMS)
	}
}

func TestDeploymentErrors(t *testing.T) {
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "x"), []byte("x"), 0o644)
	if _, err := WriteDeployment(context.Background(), tinyDeployment(), dir, 1, nil); err == nil || !strings.Contains(err.Error(), "not empty") {
		t.Errorf("a non-empty folder gave %v", err)
	}
	for name, mod := range map[string]func(*Deployment){
		"depression 90°": func(d *Deployment) { d.DepressionDeg = 90 },
		"one frame":      func(d *Deployment) { d.Frames = 1 },
		"no site":        func(d *Deployment) { d.Site, d.Sea.Site = "", "" },
		"bad start":      func(d *Deployment) { d.StartUTC = "yesterday" },
		"defects":        func(d *Deployment) { d.Sea.Defects.DropFrames = []int{1} },
	} {
		d := tinyDeployment()
		mod(&d)
		out := filepath.Join(t.TempDir(), "d")
		if _, err := WriteDeployment(context.Background(), d, out, 1, nil); err == nil {
			t.Errorf("%s: no error", name)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("%s: the folder was created although the settings were refused", name)
		}
	}
}

func TestFrameName(t *testing.T) {
	for _, c := range []struct {
		side Side
		t    float64
		want string
	}{{LeftSide, 0.1, "left_000000100.png"}, {RightSide, 0, "right_000000000.png"}, {LeftSide, 5.9, "left_000005900.png"}, {RightSide, 3600.0333, "right_003600033.png"}} {
		if got := FrameName(c.side, c.t); got != c.want {
			t.Errorf("FrameName(%v, %g) = %s, want %s", c.side, c.t, got, c.want)
		}
	}
}

// TestDeploymentCancelled: a deployment stopped half-way leaves only
// complete files and no truth elevation file.
func TestDeploymentCancelled(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "d")
	d := tinyDeployment()
	d.Frames = 6
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	_, err := WriteDeployment(ctx, d, dir, 2, func(done, total int) {
		if done == d.CalibrationViews+2 {
			cancel()
		}
	})
	if err == nil {
		t.Fatal("a cancelled deployment reported success")
	}
	if _, err := os.Stat(filepath.Join(dir, "truth_elevation.nc")); err == nil {
		t.Error("truth_elevation.nc exists after cancellation")
	}
	if _, err := os.Stat(filepath.Join(dir, "frames", "timestamps.csv")); err == nil {
		t.Error("timestamps.csv exists after cancellation")
	}
	filepath.WalkDir(dir, func(p string, e os.DirEntry, err error) error {
		if strings.Contains(filepath.Base(p), ".part-") {
			t.Errorf("temporary file left: %s", p)
		}
		return nil
	})
}
