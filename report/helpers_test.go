package report

import (
	"encoding/json"
	"html"
	"math"
	"math/rand/v2"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"crestspeed/report/stats"

	"crestspeed/report/table"
	"crestspeed/speed"
)

// syntheticRows makes crest rows of nTracks tracks (about meanRows rows
// each, 10 frames per second) shaped like analysed crests of a 5 s sea:
// crests that grow and decay along the track, crest speeds that dip below
// the phase speed, no speed in the first and last two rows of a track.
// Rows are ordered by track and time, as analysis.Run returns them.
func syntheticRows(rng *rand.Rand, nTracks, meanRows int) []speed.CrestRow {
	const dt, cp, theta = 0.1, 7.8, 0.3
	rows := make([]speed.CrestRow, 0, nTracks*meanRows)
	for id := 1; id <= nTracks; id++ {
		n := max(3, meanRows/2+rng.IntN(meanRows+1))
		f0 := rng.IntN(1000)
		s0 := 10 + 40*rng.Float64()
		n0 := 60 * rng.Float64()
		amax := 0.2 + 1.0*rng.Float64()
		r0 := 0.7 + 0.2*rng.Float64()
		lam := 20 + 20*rng.Float64()
		cloc := math.Sqrt(9.81 * lam / (2 * math.Pi))
		s := s0
		for i := 0; i < n; i++ {
			u := (float64(i) - float64(n)/2) / (float64(n)/3 + 1)
			a := amax * math.Exp(-u*u)
			ratio := r0 + 0.15*u*u/(1+u*u) + 0.03*rng.NormFloat64()
			c := ratio * cp
			w := lam / 2 * (0.9 + 0.2*rng.Float64())
			row := speed.CrestRow{
				TrackID: id,
				CrestTip: speed.CrestTip{
					Frame: f0 + i, Time: float64(f0+i) * dt,
					S: s, N: n0, Elevation: a, Width: w, Wavelength: lam, Length: 5 + 10*rng.Float64(),
				},
				CrestSpeed: c, PhaseSpeedPeak: cp, PhaseSpeedLocal: cloc,
			}
			row.X = s*math.Cos(theta) - n0*math.Sin(theta)
			row.Y = s*math.Sin(theta) + n0*math.Cos(theta)
			row.Steepness = a * math.Pi / w
			if i < 2 || i >= n-2 {
				row.CrestSpeed = math.NaN()
			}
			if i%7 == 3 {
				row.Wavelength, row.PhaseSpeedLocal = math.NaN(), math.NaN()
			}
			row.RatioPeak = row.CrestSpeed / row.PhaseSpeedPeak
			row.RatioLocal = row.CrestSpeed / row.PhaseSpeedLocal
			rows = append(rows, row)
			s += c * dt
		}
	}
	return rows
}

// syntheticTable is the crest table of syntheticRows, rounded to the
// precision of crests.csv.
func syntheticTable(rng *rand.Rand, nTracks, meanRows int) *table.Table {
	return fill(table.Crests, syntheticRows(rng, nTracks, meanRows), crestFields)
}

// statsOptions are the statistics options WriteReport uses for opt.
func statsOptions(opt Options) stats.Options {
	return stats.Options{Intervals: true, Bootstrap: opt.withDefaults().Bootstrap}
}

// checkIntervals checks that every interval of the summary's crest and
// whitecap ratio statistics contains its estimate, and that some are
// known.
func checkIntervals(t *testing.T, sum *Summary) {
	t.Helper()
	blocks := map[string]map[string]stats.RatioStats{"crest_speed_ratio": sum.Ratio}
	if sum.Whitecaps != nil {
		blocks["whitecaps/front_speed_ratio"] = sum.Whitecaps.Ratio
	}
	known := 0
	for name, b := range blocks {
		for ref, rs := range b {
			for g, st := range rs.Groups() {
				for _, c := range []struct {
					stat string
					est  float64
					iv   stats.Interval
				}{{"mean", st.Mean, st.MeanCI}, {"median", st.Median, st.MedianCI}, {"mode", st.Mode, st.ModeCI}} {
					if !c.iv.Known() {
						continue
					}
					known++
					if !c.iv.Contains(c.est) {
						t.Errorf("%s/%s group %d: %s %.6g outside its interval %.6g–%.6g", name, ref, g, c.stat, c.est, c.iv.Lo, c.iv.Hi)
					}
				}
			}
		}
	}
	if known == 0 {
		t.Error("no interval is known")
	}
}

// sumCellRE matches the cells of the page that show a number of
// summary.json.
var sumCellRE = regexp.MustCompile(`data-sum="([^"]+)"(?: data-scale="([^"]*)")?>([^<]*)<`)

// superRE matches the m×10ⁿ notation of the page.
var superRE = regexp.MustCompile(`×10([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)$`)

// parseShown reads a number as the page shows it and the half unit of its
// last digit (the rounding the display allows).
func parseShown(s string) (v, half float64, err error) {
	exp := 0
	if m := superRE.FindStringSubmatch(s); m != nil {
		plain := strings.NewReplacer("⁻", "-", "⁰", "0", "¹", "1", "²", "2", "³", "3", "⁴", "4", "⁵", "5", "⁶", "6", "⁷", "7", "⁸", "8", "⁹", "9").Replace(m[1])
		exp, _ = strconv.Atoi(plain)
		s = s[:len(s)-len(m[0])]
	}
	if i := strings.IndexAny(s, "eE"); i >= 0 {
		e, err := strconv.Atoi(s[i+1:])
		if err != nil {
			return 0, 0, err
		}
		exp += e
		s = s[:i]
	}
	v, err = strconv.ParseFloat(s, 64)
	if err != nil {
		return 0, 0, err
	}
	dec := 0
	if i := strings.IndexByte(s, '.'); i >= 0 {
		dec = len(s) - i - 1
	}
	scale := math.Pow(10, float64(exp))
	return v * scale, 0.5 * math.Pow(10, -float64(dec)) * scale, nil
}

// lookup follows a path like "whitecaps/front_speed_ratio/peak/classes/0/n"
// through decoded JSON; "inception/flags#" is the length of the flags list.
func lookup(js map[string]any, path string) (any, bool) {
	var cur any = js
	for _, p := range strings.Split(path, "/") {
		count := strings.HasSuffix(p, "#")
		p = strings.TrimSuffix(p, "#")
		switch c := cur.(type) {
		case map[string]any:
			v, ok := c[p]
			if !ok {
				return nil, false
			}
			cur = v
		case []any:
			i, err := strconv.Atoi(p)
			if err != nil || i < 0 || i >= len(c) {
				return nil, false
			}
			cur = c[i]
		default:
			return nil, false
		}
		if count {
			l, ok := cur.([]any)
			if !ok {
				return nil, false
			}
			cur = float64(len(l))
		}
	}
	return cur, true
}

// checkSumCells compares every data-sum cell of the page with the value
// at its path in summary.json, within the rounding of the display: a
// number, or an interval shown "lo – hi"; with pointOnly the interval
// cells are left out (a summary of the tracking stage has none). It
// returns the number of cells checked.
func checkSumCells(t *testing.T, page string, summaryJSON []byte, pointOnly bool) int {
	t.Helper()
	var js map[string]any
	if err := json.Unmarshal(summaryJSON, &js); err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, c := range sumCellRE.FindAllStringSubmatch(page, -1) {
		key, scaleText, text := c[1], c[2], strings.TrimSpace(html.UnescapeString(c[3]))
		if pointOnly && strings.HasSuffix(key, "_ci90") {
			continue
		}
		n++
		want, ok := lookup(js, key)
		if !ok {
			t.Errorf("cell %s: summary.json has no such value", key)
			continue
		}
		scale := 1.0
		if scaleText != "" {
			scale, _ = strconv.ParseFloat(scaleText, 64)
		}
		switch w := want.(type) {
		case nil:
			if text != "–" {
				t.Errorf("cell %s shows %q, summary.json has null", key, text)
			}
		case float64:
			checkShown(t, key, text, w*scale)
		case []any:
			lo, hi, ok := strings.Cut(text, " – ")
			if !ok || len(w) != 2 {
				t.Errorf("cell %s shows %q, summary.json has the interval %v", key, text, w)
				continue
			}
			checkShown(t, key, lo, w[0].(float64)*scale)
			checkShown(t, key, hi, w[1].(float64)*scale)
		default:
			t.Errorf("cell %s: summary.json value %v is not a number", key, want)
		}
	}
	return n
}

// checkShown checks that text shows want within the rounding of its last
// digit.
func checkShown(t *testing.T, key, text string, want float64) {
	t.Helper()
	v, half, err := parseShown(text)
	if err != nil {
		t.Errorf("cell %s shows %q, not a number", key, text)
		return
	}
	if math.Abs(v-want) > half*(1+1e-9) {
		t.Errorf("cell %s shows %q, summary.json has %v", key, text, want)
	}
}

// pointEstimates drops the intervals of statistics.
func pointEstimates(rs stats.RatioStats) stats.RatioStats {
	drop := func(s stats.Stats) stats.Stats {
		s.MeanCI, s.MedianCI, s.ModeCI = stats.NoInterval(), stats.NoInterval(), stats.NoInterval()
		return s
	}
	out := stats.RatioStats{All: drop(rs.All)}
	for _, c := range rs.Classes {
		out.Classes = append(out.Classes, drop(c))
	}
	return out
}
