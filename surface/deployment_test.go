package surface_test

import (
	"context"
	"encoding/json"
	"fmt"
	"image"
	"os"
	"path/filepath"
	"runtime"
	"testing"

	"crestspeed/samples"
)

// testDeploymentSpec is the rendered synthetic deployment the end-to-end
// checks use: the demo rig at 640×512 px, 13.5 m above the water looking
// 45° down (the sea seen from 8 to 26 m of range, where a 640-px rig
// resolves centimetres), and a JONSWAP wind sea of Hs 0.6 m and Tp 2.8 s
// (peak wavelength 12 m, so that the analysis grid spans about 1.4 of
// them) running toward the rig, 6 frames per second for 120 s (43 peak
// periods, 17 frames per period: enough tracked crests for a median
// crest-speed ratio known to about ±0.02). It renders in about five
// minutes on two cores, once: the rendering is cached under os.TempDir().
func testDeploymentSpec() samples.Deployment {
	d := samples.DemoDeployment()
	d.ImageSize = image.Pt(640, 512)
	d.DepressionDeg = 45
	d.Sea.JONSWAP.HsM = 0.6
	d.Sea.JONSWAP.TpS = 2.8
	d.FPS = 6
	d.Frames = 720
	d.CalibrationViews = 1
	return d
}

// cachedDeployment renders a deployment once and keeps it under
// os.TempDir(), keyed by name; later runs reuse it. Rendering goes to a
// fresh folder renamed into place when complete, so a cache entry is
// never half-written.
func cachedDeployment(t testing.TB, name string, d samples.Deployment) (string, *samples.DeploymentTruth) {
	t.Helper()
	dir := filepath.Join(os.TempDir(), "crestspeed-surface-test-"+name)
	truthPath := samples.TruthPath(filepath.Join(dir, samples.DeploymentTruthElevation))
	if _, err := os.Stat(truthPath); err != nil {
		tmp, err := os.MkdirTemp(os.TempDir(), "crestspeed-surface-render-")
		if err != nil {
			t.Fatal(err)
		}
		defer os.RemoveAll(tmp)
		t.Logf("rendering the %s deployment (%d frames of %v) into %s; later runs reuse it", name, d.Frames, d.ImageSize, dir)
		if _, err := samples.WriteDeployment(context.Background(), d, filepath.Join(tmp, "d"), runtime.NumCPU(), nil); err != nil {
			t.Fatalf("rendering the test deployment: %v", err)
		}
		if err := os.Rename(filepath.Join(tmp, "d"), dir); err != nil {
			if _, statErr := os.Stat(truthPath); statErr != nil {
				t.Fatalf("cannot cache the test deployment in %s: %v", dir, err)
			}
		}
	}
	tr, err := readDeploymentTruth(truthPath)
	if err != nil {
		t.Fatal(err)
	}
	return dir, tr
}

func readDeploymentTruth(path string) (*samples.DeploymentTruth, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var tr samples.DeploymentTruth
	if err := json.Unmarshal(data, &tr); err != nil {
		return nil, fmt.Errorf("%s: %v", path, err)
	}
	return &tr, nil
}
