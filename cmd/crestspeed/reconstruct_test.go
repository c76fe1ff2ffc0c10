package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"image"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"crestspeed/calib"
	"crestspeed/ingest"
	"crestspeed/samples"
)

// tinyDeployment renders a small synthetic deployment into a temporary
// folder: the demo rig at 640×512 px looking 45° down at a short wind sea
// (Hs 0.6 m, Tp 2.8 s), 4 frames at 2 Hz.
func tinyDeployment(t *testing.T) (dir string, truth *samples.DeploymentTruth) {
	t.Helper()
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM = 0.6
	d.Sea.JONSWAP.TpS = 2.8
	d.FPS = 2
	d.Frames = 4
	d.CalibrationViews = 1
	dir = filepath.Join(t.TempDir(), "dep")
	tr, err := samples.WriteDeployment(context.Background(), d, dir, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	return dir, tr
}

// The reconstruct verb on a rendered record: a rig without a sea plane
// gets one fitted (written beside the maps) close to the pose the record
// was rendered with; the maps and the point counts are valid NetCDF files
// of the contract; a second run without --force is refused.
func TestReconstructCommand(t *testing.T) {
	dep, _ := tinyDeployment(t)
	rig, err := calib.LoadRig(filepath.Join(dep, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	truePlane := *rig.SeaPlane
	rig.SeaPlane = nil
	out := t.TempDir()
	rigPath := filepath.Join(out, "rig.yaml")
	if err := rig.Save(rigPath); err != nil {
		t.Fatal(err)
	}
	// Give the timestamps file a utc column (ISO 8601 instants) 0.25 s
	// after each time_s from a chosen instant: time 0 of the maps must come
	// from it, and say so.
	addUTCColumn(t, filepath.Join(dep, samples.DeploymentFramesDir, samples.DeploymentTimestamps), time.Date(2026, 3, 9, 6, 30, 0, 0, time.UTC))
	maps := filepath.Join(out, "maps.nc")
	_, stderr, err := run(t, "reconstruct", "--rig", rigPath, "--frames", filepath.Join(dep, samples.DeploymentFramesDir),
		"--out", maps, "--plane-frames", "4", "--workers", "2")
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	for _, w := range []string{"mean sea plane fitted", "grid x", "disparities", "4 maps"} {
		if !strings.Contains(stderr, w) {
			t.Errorf("log lacks %q:\n%s", w, stderr)
		}
	}
	src, err := ingest.OpenElevation(maps, ingest.ElevationOptions{})
	if err != nil {
		t.Fatal(err)
	}
	meta := src.Meta()
	src.Close()
	if len(meta.Times) != 4 || meta.Attrs["sea_plane"] == "" || !strings.HasPrefix(meta.Attrs["grid"], "automatic") {
		t.Errorf("elevation maps: %d frames, attributes %v", len(meta.Times), meta.Attrs)
	}
	if !strings.HasPrefix(meta.Attrs["time_origin"], ingest.OriginUTCColumn) || meta.Attrs["time_base"] == "" ||
		meta.TimeUnits != "seconds since 2026-03-09T06:30:00.25Z" || !strings.Contains(stderr, "time 0: "+ingest.OriginUTCColumn) {
		t.Errorf("time base %q, origin %q, units %q; log:\n%s", meta.Attrs["time_base"], meta.Attrs["time_origin"], meta.TimeUnits, stderr)
	}
	points, fitted := reconstructOutputs(maps)
	if _, err := os.Stat(points); err != nil {
		t.Errorf("point counts: %v", err)
	}
	got, err := calib.LoadRig(fitted)
	if err != nil {
		t.Fatal(err)
	}
	if got.SeaPlane == nil {
		t.Fatal("the rig written beside the maps has no sea plane")
	}
	dot := 0.0
	for i := 0; i < 3; i++ {
		dot += got.SeaPlane.Normal[i] * truePlane.Normal[i]
	}
	ang := math.Acos(math.Min(1, dot)) * 180 / math.Pi
	// Reference: the pose the record was rendered with (rig_truth.yaml).
	// Four snapshots over 1.5 s do not average the waves out of the plane:
	// their mean surface over a patch one or two wavelengths across keeps a
	// tilt up to the waves' RMS slope (about 0.1 rad for this sea) and an
	// offset up to a fraction of Hs. The bounds only catch a wrong frame or
	// sign; the fit itself is checked in package surface.
	if ang > 2 || math.Abs(got.SeaPlane.OffsetM-truePlane.OffsetM) > 0.3 {
		t.Errorf("fitted plane %.3f° and %.3f m from the rendered pose", ang, got.SeaPlane.OffsetM-truePlane.OffsetM)
	}
	_, _, err = run(t, "reconstruct", "--rig", rigPath, "--frames", filepath.Join(dep, samples.DeploymentFramesDir), "--out", maps)
	checkSentence(t, err, "--force")
}

// A rig whose image size differs from the frames is one clear error, given
// before any work, and no output is left behind.
func TestReconstructRigSizeMismatch(t *testing.T) {
	dep, _ := tinyDeployment(t)
	rig, err := calib.LoadRig(filepath.Join(dep, samples.DeploymentRig))
	if err != nil {
		t.Fatal(err)
	}
	big := samples.ScaleRig(rig, image.Pt(1280, 1024))
	out := t.TempDir()
	rigPath := filepath.Join(out, "big.yaml")
	if err := big.Save(rigPath); err != nil {
		t.Fatal(err)
	}
	maps := filepath.Join(out, "maps.nc")
	_, _, err = run(t, "reconstruct", "--rig", rigPath, "--frames", filepath.Join(dep, samples.DeploymentFramesDir), "--out", maps)
	checkSentence(t, err, "640×512", "1280×1024", rigPath)
	entries, _ := os.ReadDir(out)
	if len(entries) != 1 {
		t.Errorf("output folder holds %d entries after the error; want only the rig file", len(entries))
	}
}

// Calling mistakes are usage errors (exit status 2), one sentence each.
func TestReconstructUsageErrors(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"reconstruct", "--rig", "r.yaml", "--frames", dir}, "--out"},
		{[]string{"reconstruct", "--rig", "r.yaml", "--frames", dir, "--out", "m.txt"}, ".nc"},
		{[]string{"reconstruct", "--frames", dir, "--out", "m.nc"}, "--rig"},
		{[]string{"reconstruct", "--rig", "r.yaml", "--out", "m.nc"}, "--frames"},
		{[]string{"reconstruct", "--rig", "r.yaml", "--frames", dir, "--left", "a*.png", "--out", "m.nc"}, "not both"},
		{[]string{"reconstruct", "--rig", "r.yaml", "--frames", dir, "--x0", "1", "--out", "m.nc"}, "x0, x1, y0, y1"},
	} {
		_, _, err := run(t, c.args...)
		checkSentence(t, err, c.want)
		if exitCode(err) != 2 {
			t.Errorf("%v: exit status %d, want 2", c.args, exitCode(err))
		}
	}
}

// addUTCColumn rewrites a timestamps file (header frame,time_s,left,right)
// with a utc column: start + time_s + 0.25 s, as ISO 8601 instants.
func addUTCColumn(t *testing.T, path string, start time.Time) {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	r := csv.NewReader(bytes.NewReader(data))
	rows, err := r.ReadAll()
	if err != nil || len(rows) < 2 {
		t.Fatalf("timestamps %s: %v", path, err)
	}
	col := slices.Index(rows[0], "time_s")
	if col < 0 {
		t.Fatalf("timestamps %s has no time_s column: %v", path, rows[0])
	}
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	for i, row := range rows {
		if i == 0 {
			w.Write(append(row, "utc"))
			continue
		}
		ts, err := strconv.ParseFloat(row[col], 64)
		if err != nil {
			t.Fatal(err)
		}
		at := start.Add(time.Duration((ts + 0.25) * float64(time.Second)))
		w.Write(append(row, at.Format("2006-01-02T15:04:05.000Z")))
	}
	w.Flush()
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// A damaged first pair (its left PNG cut to a third) is skipped, counted
// and named in the log with its files, like the same damage later in the
// record; the other pairs are reconstructed and the run succeeds.
func TestReconstructBadFirstPairSkippedAndNamed(t *testing.T) {
	dep, _ := tinyDeployment(t)
	frames := filepath.Join(dep, samples.DeploymentFramesDir)
	lefts, err := filepath.Glob(filepath.Join(frames, "left_*"))
	if err != nil || len(lefts) != 4 {
		t.Fatalf("left frames %v, %v", lefts, err)
	}
	slices.Sort(lefts)
	data, err := os.ReadFile(lefts[0])
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(lefts[0], data[:len(data)/3], 0o644); err != nil {
		t.Fatal(err)
	}
	maps := filepath.Join(t.TempDir(), "maps.nc")
	_, stderr, err := run(t, "reconstruct", "--rig", filepath.Join(dep, samples.DeploymentRig), "--frames", frames,
		"--out", maps, "--plane-frames", "3", "--workers", "2")
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr)
	}
	if !strings.Contains(stderr, "skipped pair 0") || !strings.Contains(stderr, lefts[0]) || !strings.Contains(stderr, "3 maps") {
		t.Errorf("the damaged first pair is not skipped and named:\n%s", stderr)
	}
}
