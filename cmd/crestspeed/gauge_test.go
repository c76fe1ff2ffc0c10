package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"crestspeed/samples"
)

// A gauge series built from the generator's own components at a point of
// the grid (exact linear superposition, Dean & Dalrymple 1991), sampled at
// 4 Hz where the maps are at 10 Hz and over a longer span, gives Hm0 and
// Tp equal to the maps' there within 1 % and no lag; the same series
// delayed by 1.3 s gives 1.3 s back. A position off the grid and a series
// that does not overlap the maps are refused before any analysis.
func TestGaugeComparison(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "c.yaml")
	os.WriteFile(cfg, []byte(`synthesize:
  kind: jonswap
  jonswap: {hs_m: 1.0, tp_s: 4.0, spreading_s: 15, seed: 5, components: 128, f_max_over_fp: 2.5}
  grid: {nx: 96, ny: 64, duration_s: 300, frame_rate_hz: 10, start_utc: "2026-06-14T09:00:00Z"}
track: {breaking_index: false}
`), 0o644)
	maps := filepath.Join(dir, "s.nc")
	if _, _, err := run(t, "synthesize", "--config", cfg, "--out", maps, "--quiet"); err != nil {
		t.Fatal(err)
	}
	truth, err := samples.ReadTruth(samples.TruthPath(maps))
	if err != nil {
		t.Fatal(err)
	}
	sea, err := truth.Scenario.Sea()
	if err != nil {
		t.Fatal(err)
	}
	const gx, gy = 40.0, 30.0
	start, _ := time.Parse(time.RFC3339, "2026-06-14T09:00:00Z")
	write := func(name string, delay float64, utc bool) string {
		var b strings.Builder
		if utc {
			b.WriteString("utc,eta_m\n")
		} else {
			b.WriteString("time_s,eta_m\n")
		}
		for k := 0; k <= 340*4; k++ {
			tt := -20 + float64(k)/4
			eta := sea.Eta(gx, gy, tt-delay)
			if utc {
				fmt.Fprintf(&b, "%s,%.6f\n", start.Add(time.Duration(tt*float64(time.Second))).Format(time.RFC3339Nano), eta)
			} else {
				fmt.Fprintf(&b, "%.3f,%.6f\n", tt, eta)
			}
		}
		p := filepath.Join(dir, name)
		os.WriteFile(p, []byte(b.String()), 0o644)
		return p
	}
	type figs struct {
		Hm0 float64 `json:"hm0_m"`
		Tp  float64 `json:"tp_s"`
	}
	compare := func(gauge, out string) (m, g figs, lag, corr float64) {
		t.Helper()
		od := filepath.Join(dir, out)
		if _, _, err := run(t, "track", "--config", cfg, "--input", maps, "--out", od, "--gauge", gauge, "--gauge-x", "40", "--gauge-y", "30", "--no-report", "--quiet"); err != nil {
			t.Fatal(err)
		}
		var sum struct {
			Gauge struct {
				Maps, Gauge figs
				Lag         float64 `json:"lag_s"`
				Corr        float64 `json:"correlation"`
			} `json:"gauge"`
		}
		b, _ := os.ReadFile(filepath.Join(od, "summary.json"))
		if err := json.Unmarshal(b, &sum); err != nil {
			t.Fatal(err)
		}
		if _, err := os.Stat(filepath.Join(od, "gauge_spectrum.csv")); err != nil {
			t.Errorf("no gauge_spectrum.csv: %v", err)
		}
		return sum.Gauge.Maps, sum.Gauge.Gauge, sum.Gauge.Lag, sum.Gauge.Corr
	}
	m, g, lag, corr := compare(write("gauge.csv", 0, true), "same")
	t.Logf("maps Hm0 %.4f Tp %.4f; gauge Hm0 %.4f Tp %.4f; lag %.4f s, correlation %.4f", m.Hm0, m.Tp, g.Hm0, g.Tp, lag, corr)
	if math.Abs(m.Hm0/g.Hm0-1) > 0.01 || math.Abs(m.Tp/g.Tp-1) > 0.01 {
		t.Errorf("maps Hm0 %.4f m, Tp %.3f s; gauge Hm0 %.4f m, Tp %.3f s: want equal within 1 %%", m.Hm0, m.Tp, g.Hm0, g.Tp)
	}
	if math.Abs(lag) > 0.05 || corr < 0.99 {
		t.Errorf("lag %.3f s, correlation %.4f; want 0 ± 0.05 s (half a frame) and above 0.99", lag, corr)
	}
	_, _, lag, _ = compare(write("late.csv", 1.3, false), "late")
	if math.Abs(lag-1.3) > 0.05 {
		t.Errorf("a gauge 1.3 s late gives a lag of %.3f s", lag)
	}
	_, _, err = run(t, "track", "--config", cfg, "--input", maps, "--out", filepath.Join(dir, "off"), "--gauge", filepath.Join(dir, "gauge.csv"), "--gauge-x", "400", "--gauge-y", "30", "--no-report", "--quiet")
	checkSentence(t, err, "outside the grid")
	early := filepath.Join(dir, "early.csv")
	os.WriteFile(early, []byte("time_s,eta_m\n"+strings.Repeat("", 0)+func() string {
		var b strings.Builder
		for k := 0; k < 100; k++ {
			fmt.Fprintf(&b, "%d,0.1\n", -1000+k)
		}
		return b.String()
	}()), 0o644)
	_, _, err = run(t, "track", "--config", cfg, "--input", maps, "--out", filepath.Join(dir, "early"), "--gauge", early, "--gauge-x", "40", "--gauge-y", "30", "--no-report", "--quiet")
	checkSentence(t, err, "do not overlap")
}
