package report

import (
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"crestspeed/report/stats"
)

// syntheticDeployment writes a synthetic track folder and loads it.
func syntheticDeployment(t *testing.T, nTracks, meanRows int, seed uint64) *Deployment {
	t.Helper()
	src := t.TempDir()
	writeSyntheticTrackDir(t, src, nTracks, meanRows, seed)
	d, err := LoadDeployment(src)
	if err != nil {
		t.Fatal(err)
	}
	return d
}

var fewRowRE = regexp.MustCompile(`<tr class="(all)?( few)?"><td>([^<]*(?:<sub>[^<]*</sub>[^<]*)*)</td>`)

// Classes with fewer tracks than MinClassTracks are marked ◦ in the
// tables and drawn as points, not as density curves: with a minimum above
// every class all rows are marked and figure 1 draws every class and the
// whole sample as points; with a minimum of one none is.
func TestFewTrackClassesAsPoints(t *testing.T) {
	d := syntheticDeployment(t, 30, 15, 2)
	for _, c := range []struct {
		min, wantFew int
	}{{1, 0}, {1000, 8}} {
		res, err := WriteReport(t.TempDir(), d, Options{Bootstrap: BootstrapOptions{Resamples: 100, Seed: 1, Workers: 2}, MinClassTracks: c.min})
		if err != nil {
			t.Fatal(err)
		}
		page, err := os.ReadFile(res.HTML)
		if err != nil {
			t.Fatal(err)
		}
		few := 0
		for _, m := range fewRowRE.FindAllStringSubmatch(string(page), -1) {
			if m[2] != "" {
				few++
			}
		}
		if few != c.wantFew {
			t.Errorf("minimum %d tracks: %d table rows marked as few, want %d", c.min, few, c.wantFew)
		}
		svg := string(res.Figures[0].SVG)
		points := strings.Count(svg, "too few tracks for a curve")
		if want := c.wantFew / 2; points != want {
			t.Errorf("minimum %d tracks: figure 1 draws %d groups as points, want %d", c.min, points, want)
		}
		if c.min == 1 && !strings.Contains(svg, "KDE") {
			t.Errorf("minimum 1 track: figure 1 has no density curve")
		}
		if res.Summary.Method["min_class_tracks"] != c.min {
			t.Errorf("summary.json records min_class_tracks %v, the report used %d", res.Summary.Method["min_class_tracks"], c.min)
		}
	}
}

// A known uncertainty u of the reference speed c_p widens every interval
// of c_cr/c_p to the half-width √(ξ² + (z u θ̂)²) (JCGM 100:2008 §5.1, z
// the two-sided 90 % normal point 1.6449) and leaves c_cr/c_loc alone;
// summary.json and the page say it was included.
func TestReferenceUncertaintyInRatioIntervals(t *testing.T) {
	d := syntheticDeployment(t, 60, 15, 4)
	opt := Options{Bootstrap: BootstrapOptions{Resamples: 200, Seed: 3, Workers: 2}}
	a, err := WriteReport(t.TempDir(), d, opt)
	if err != nil {
		t.Fatal(err)
	}
	const u = 0.02
	d.Summary.SeaState.PeakPhaseSpeedUncertainty = u * d.Summary.SeaState.PeakPhaseSpeed
	b, err := WriteReport(t.TempDir(), d, opt)
	if err != nil {
		t.Fatal(err)
	}
	const z = 1.6448536269514722
	for ref, widened := range map[string]bool{"peak": true, "local": false} {
		for g, sa := range a.Summary.Ratio[ref].Groups() {
			sb := b.Summary.Ratio[ref].Groups()[g]
			for _, c := range []struct {
				est      float64
				was, now stats.Interval
			}{{sa.Mean, sa.MeanCI, sb.MeanCI}, {sa.Median, sa.MedianCI, sb.MedianCI}, {sa.Mode, sa.ModeCI, sb.ModeCI}} {
				xi := (c.was.Hi - c.was.Lo) / 2
				want := xi
				if widened {
					want = math.Hypot(xi, z*u*math.Abs(c.est))
				}
				if got := (c.now.Hi - c.now.Lo) / 2; math.Abs(got-want) > 1e-12 {
					t.Errorf("%s group %d: half-width %.9g, want %.9g", ref, g, got, want)
				}
			}
		}
	}
	if s, _ := b.Summary.Method["reference_uncertainty"].(string); !strings.Contains(s, "0.02") {
		t.Errorf("summary.json does not record the uncertainty of c_p used: %q", s)
	}
	page, _ := os.ReadFile(b.HTML)
	if !strings.Contains(string(page), "include the uncertainty of c<sub>p</sub>") {
		t.Error("the page does not say the intervals include the uncertainty of c_p")
	}
	checkIntervals(t, b.Summary)
}

// The defaults of the options are those the template documents, and
// zero settings take them.
func TestDefaultOptions(t *testing.T) {
	d := DefaultOptions()
	if d.Bootstrap.Resamples != stats.DefaultResamples || d.Bootstrap.Seed != 1 || d.HighestCrests != 5 || d.MinClassTracks != 10 {
		t.Errorf("defaults %+v", d)
	}
	if w := (Options{}).withDefaults(); w.Bootstrap.Resamples != 1000 || w.HighestCrests != 5 || w.MinClassTracks != 10 {
		t.Errorf("zero options with defaults: %+v", w)
	}
	if err := (Options{MinClassTracks: -1}).Validate(); err == nil {
		t.Error("a negative minimum of tracks per class is accepted")
	}
	tmpl, err := os.ReadFile(filepath.Join("..", "cmd", "crestspeed", "config_template.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	if !regexp.MustCompile(`(?m)^  min_class_tracks: 10$`).Match(tmpl) {
		t.Error("config_template.yaml does not give min_class_tracks: 10 in the report section")
	}
}

// WriteReport refuses a nil deployment with a sentence instead of a
// crash.
func TestWriteReportNilDeployment(t *testing.T) {
	if _, err := WriteReport(t.TempDir(), nil, Options{}); err == nil || !strings.Contains(err.Error(), "no crest rows") {
		t.Errorf("nil deployment: %v", err)
	}
}
