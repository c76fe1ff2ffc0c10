package campaign

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"sync"
	"testing"

	"crestspeed/ingest"
	"crestspeed/report"
	"crestspeed/samples"
	"crestspeed/speed"
	"crestspeed/speed/analysis"
)

// fixtureRoot holds the track folders the tests share; TestMain removes it.
var fixtureRoot string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "crestspeed-campaign-test-")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	fixtureRoot = dir
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// deploymentSpec is one synthetic deployment of the fixture.
type deploymentSpec struct {
	name, site, start string
	sea               samples.JONSWAPSea
	wind              string // wind speed attribute, "" for none
}

// fixtureSpecs are two small deployments at an invented site on two days:
// directional JONSWAP seas of different peak periods and directions, so
// that their c_p differ, each with painted whitecaps.
var fixtureSpecs = []deploymentSpec{
	{"north", "Kelvane Sound north pier (invented)", "2026-06-14T09:00:00Z",
		samples.JONSWAPSea{HsM: 1.2, TpS: 4, Gamma: 3.3, Spreading: 10, DirectionDeg: 20, Seed: 3, Components: 96, FMaxRatio: 2.5}, "9.5"},
	{"south", "Kelvane Sound south buoy line (invented)", "2026-06-15T14:30:00Z",
		samples.JONSWAPSea{HsM: 1.0, TpS: 3.5, Gamma: 3.3, Spreading: 12, DirectionDeg: 35, Seed: 8, Components: 96, FMaxRatio: 2.5}, ""},
}

var (
	fixtureOnce sync.Once
	fixtureDirs []string
	fixtureErr  error
)

// fixture returns the track folders of the two deployments, made once:
// each record is synthesised (samples.Synthesize), analysed
// (analysis.Run), painted with foam patches riding on the steepest
// crests found, synthesised and analysed again with whitecaps, and its
// track files written (report.WriteTrackOutputs), as "crestspeed track"
// writes them.
func fixture(t *testing.T) []string {
	t.Helper()
	fixtureOnce.Do(func() {
		for _, sp := range fixtureSpecs {
			dir, err := makeDeployment(filepath.Join(fixtureRoot, sp.name), sp)
			if err != nil {
				fixtureErr = err
				return
			}
			fixtureDirs = append(fixtureDirs, dir)
		}
	})
	if fixtureErr != nil {
		t.Fatal(fixtureErr)
	}
	return fixtureDirs
}

// trackConfig is the part of the resolved configuration the campaign
// compares, as "crestspeed track" records it.
func trackConfig(o analysis.Options) map[string]any {
	return map[string]any{"track": map[string]any{
		"speed_window_s": o.SpeedWindowS, "min_crest_fraction_hm0": o.MinCrestFraction, "min_crest_length_m": o.MinCrestLengthM,
		"min_foam_patch_area_m2": o.Breaking.MinPatchArea, "foam_saturation_fraction": o.Breaking.MaxFoamFraction,
	}}
}

func makeDeployment(dir string, sp deploymentSpec) (string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", err
	}
	sc := samples.Scenario{Site: sp.site, Kind: samples.KindJONSWAP, JONSWAP: sp.sea,
		Grid: samples.GridSpec{Nx: 72, Ny: 40, DxM: 1, DyM: 1, FPS: 10, Duration: 40, Start: sp.start}}
	opt := analysis.Options{MinCrestFraction: 0.1, MinCrestLengthM: 2, MaxGapFrames: 2, Workers: 2,
		Breaking: speed.DefaultBreakingOptions()}
	plain := filepath.Join(dir, "plain.nc")
	first, err := synthAndAnalyse(sc, plain, opt)
	if err != nil {
		return "", err
	}
	// foam on the steepest crest of the ten steepest tracks, at its
	// steepest moment, moving at 0.65–0.95 c_p along the mean direction
	type peak struct {
		sc  float64
		row speed.CrestRow
	}
	best := map[int]peak{}
	for _, r := range first.Rows {
		if b, ok := best[r.TrackID]; !math.IsNaN(r.Steepness) && r.Time > 2 && r.Time < 36 && (!ok || r.Steepness > b.sc) {
			best[r.TrackID] = peak{r.Steepness, r}
		}
	}
	var ranked []peak
	for _, p := range best {
		ranked = append(ranked, p)
	}
	sort.Slice(ranked, func(i, j int) bool {
		if ranked[i].sc != ranked[j].sc {
			return ranked[i].sc > ranked[j].sc
		}
		return ranked[i].row.TrackID < ranked[j].row.TrackID
	})
	theta, cp := first.Refs.Theta, first.Refs.PeakPhaseSpeed
	sc.Foam = samples.FoamSpec{Enabled: true}
	for i := 0; i < 10 && i < len(ranked); i++ {
		r := ranked[i].row
		sc.Foam.Patches = append(sc.Foam.Patches, samples.FoamPatch{
			StartS: r.Time, FrontXM: r.X + math.Cos(theta), FrontYM: r.Y + math.Sin(theta),
			DirectionDeg: theta * 180 / math.Pi, SpeedMPS: (0.65 + 0.03*float64(i)) * cp,
			FrontLengthM: 8, LengthM: 3, DurationS: 2.5,
		})
	}
	nc := filepath.Join(dir, "elevation.nc")
	opt.Whitecaps = true
	rec, err := synthAndAnalyse(sc, nc, opt)
	if err != nil {
		return "", err
	}
	if rec.Whitecaps == nil {
		return "", fmt.Errorf("%s: the analysis found no whitecaps", sp.name)
	}
	if sp.wind != "" {
		rec.Meta.Attrs[DefaultWindSpeedAttribute] = sp.wind
	}
	in, err := report.DescribeFile(nc)
	if err != nil {
		return "", err
	}
	tracks := filepath.Join(dir, "tracks")
	_, err = report.WriteTrackOutputs(tracks, rec, report.RunInfo{Version: "test", Config: trackConfig(opt),
		Inputs: []report.FileInfo{in}, SteepnessBounds: []float64{0.1, 0.2}})
	return tracks, err
}

func synthAndAnalyse(sc samples.Scenario, nc string, opt analysis.Options) (*analysis.Record, error) {
	if _, err := samples.Synthesize(context.Background(), sc, nc, 1, 2, nil); err != nil {
		return nil, err
	}
	src, err := ingest.OpenElevation(nc, ingest.ElevationOptions{})
	if err != nil {
		return nil, err
	}
	defer src.Close()
	return analysis.Run(context.Background(), src, opt)
}
