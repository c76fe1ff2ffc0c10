package report

import (
	"bufio"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"

	"crestspeed/speed"
)

// CrestColumns is the header of crests.csv, one row per crest tip per frame.
var CrestColumns = []string{
	"track_id", "time_s", "x_m", "y_m", "crest_elevation_m", "zero_crossing_width_m",
	"steepness_sc", "crest_speed_mps", "phase_speed_peak_mps", "phase_speed_local_mps",
	"ratio_peak", "ratio_local",
	"frame", "along_m", "across_m", "local_wavelength_m", "crest_length_m",
	"surface_speed_mps", "bx", "foam",
}

// TrackColumns is the header of tracks.csv, one row per track.
var TrackColumns = []string{
	"track_id", "first_time_s", "last_time_s", "frames", "max_crest_elevation_m", "max_steepness_sc",
	"min_ratio_peak", "mean_ratio_peak", "min_ratio_local", "mean_ratio_local", "rows_with_speed",
}

// num formats a float for CSV: shortest round-trip form, empty for NaN.
func num(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// WriteCrestsCSV writes the crest rows, ordered by track and time.
func WriteCrestsCSV(w io.Writer, rows []speed.CrestRow) error {
	bw := bufio.NewWriterSize(w, 1<<16)
	if _, err := bw.WriteString(joinCSV(CrestColumns)); err != nil {
		return err
	}
	rec := make([]string, len(CrestColumns))
	for _, r := range rows {
		rec[0] = strconv.Itoa(r.TrackID)
		rec[1] = num(r.Time)
		rec[2] = num(r.X)
		rec[3] = num(r.Y)
		rec[4] = num(r.Elevation)
		rec[5] = num(r.Width)
		rec[6] = num(r.Steepness)
		rec[7] = num(r.CrestSpeed)
		rec[8] = num(r.PhaseSpeedPeak)
		rec[9] = num(r.PhaseSpeedLocal)
		rec[10] = num(r.RatioPeak)
		rec[11] = num(r.RatioLocal)
		rec[12] = strconv.Itoa(r.Frame)
		rec[13] = num(r.S)
		rec[14] = num(r.N)
		rec[15] = num(r.Wavelength)
		rec[16] = num(r.Length)
		rec[17] = num(r.SurfaceSpeed)
		rec[18] = num(r.BreakingIndex)
		rec[19] = "0"
		if r.Foam {
			rec[19] = "1"
		}
		if _, err := bw.WriteString(joinCSV(rec)); err != nil {
			return err
		}
	}
	return bw.Flush()
}

func joinCSV(rec []string) string {
	n := 0
	for _, s := range rec {
		n += len(s) + 1
	}
	b := make([]byte, 0, n)
	for i, s := range rec {
		if i > 0 {
			b = append(b, ',')
		}
		b = append(b, s...)
	}
	return string(append(b, '\n'))
}

// TrackSummary is one row of tracks.csv.
type TrackSummary struct {
	ID                          int
	First, Last                 float64
	Frames                      int
	MaxElevation, MaxSteepness  float64
	MinRatioPeak, MeanRatioPeak float64
	MinRatioLocal, MeanRatioLoc float64
	RowsWithSpeed               int
}

// SummariseTracks condenses rows (ordered by track) into one summary per
// track.
func SummariseTracks(rows []speed.CrestRow) []TrackSummary {
	var out []TrackSummary
	for i := 0; i < len(rows); {
		j := i
		for j < len(rows) && rows[j].TrackID == rows[i].TrackID {
			j++
		}
		ts := TrackSummary{ID: rows[i].TrackID, First: rows[i].Time, Last: rows[j-1].Time, Frames: j - i,
			MinRatioPeak: math.NaN(), MinRatioLocal: math.NaN()}
		var sp, sl float64
		var np, nl int
		for _, r := range rows[i:j] {
			ts.MaxElevation = math.Max(ts.MaxElevation, r.Elevation)
			ts.MaxSteepness = math.Max(ts.MaxSteepness, r.Steepness)
			if !math.IsNaN(r.RatioPeak) {
				sp += r.RatioPeak
				np++
				if math.IsNaN(ts.MinRatioPeak) || r.RatioPeak < ts.MinRatioPeak {
					ts.MinRatioPeak = r.RatioPeak
				}
			}
			if !math.IsNaN(r.RatioLocal) {
				sl += r.RatioLocal
				nl++
				if math.IsNaN(ts.MinRatioLocal) || r.RatioLocal < ts.MinRatioLocal {
					ts.MinRatioLocal = r.RatioLocal
				}
			}
		}
		ts.MeanRatioPeak, ts.MeanRatioLoc = math.NaN(), math.NaN()
		if np > 0 {
			ts.MeanRatioPeak = sp / float64(np)
		}
		if nl > 0 {
			ts.MeanRatioLoc = sl / float64(nl)
		}
		ts.RowsWithSpeed = np
		out = append(out, ts)
		i = j
	}
	return out
}

// WriteTracksCSV writes one row per track.
func WriteTracksCSV(w io.Writer, tracks []TrackSummary) error {
	bw := bufio.NewWriter(w)
	bw.WriteString(joinCSV(TrackColumns))
	for _, t := range tracks {
		bw.WriteString(joinCSV([]string{
			strconv.Itoa(t.ID), num(t.First), num(t.Last), strconv.Itoa(t.Frames),
			num(t.MaxElevation), num(t.MaxSteepness), num(t.MinRatioPeak), num(t.MeanRatioPeak),
			num(t.MinRatioLocal), num(t.MeanRatioLoc), strconv.Itoa(t.RowsWithSpeed),
		}))
	}
	return bw.Flush()
}

// RatioStats are the statistics of one crest-speed ratio.
type RatioStats struct {
	Classes []Stats `json:"classes"`
	All     Stats   `json:"all"`
}

// ClassStatistics computes the statistics of ratio per steepness class and
// over all rows.
func ClassStatistics(rows []speed.CrestRow, inner []float64, ratio func(speed.CrestRow) float64) RatioStats {
	return classStatistics(len(rows), inner,
		func(i int) (float64, float64, int) { return ratio(rows[i]), rows[i].Steepness, rows[i].TrackID })
}

// classStatistics summarises n samples, sample i giving its value, the
// steepness that sets its class and the track it belongs to (so that each
// class also counts its tracks). NaN and infinite values are left out.
func classStatistics(n int, inner []float64, sample func(i int) (value, steepness float64, track int)) RatioStats {
	bounds := ClassBounds(inner)
	per := make([][]float64, len(bounds))
	perTracks := make([]map[int]bool, len(bounds))
	for k := range perTracks {
		perTracks[k] = map[int]bool{}
	}
	allTracks := map[int]bool{}
	var all []float64
	for i := 0; i < n; i++ {
		v, sc, id := sample(i)
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		all = append(all, v)
		allTracks[id] = true
		for k, b := range bounds {
			if sc >= b[0] && sc < b[1] {
				per[k] = append(per[k], v)
				perTracks[k][id] = true
				break
			}
		}
	}
	out := RatioStats{All: Summarise(all, 0, math.Inf(1))}
	out.All.Tracks = len(allTracks)
	for k, b := range bounds {
		st := Summarise(per[k], b[0], b[1])
		st.Tracks = len(perTracks[k])
		out.Classes = append(out.Classes, st)
	}
	return out
}

// MarshalJSON writes NaN and infinite values as null (JSON has no NaN).
func (s Stats) MarshalJSON() ([]byte, error) {
	m := []struct {
		k string
		v any
	}{
		{"sc_min", jsonNum(s.ScMin)}, {"sc_max", jsonNum(s.ScMax)}, {"n", s.N}, {"tracks", s.Tracks},
		{"mean", jsonNum(s.Mean)}, {"mean_ci90", jsonInterval(s.MeanCI)},
		{"median", jsonNum(s.Median)}, {"median_ci90", jsonInterval(s.MedianCI)},
		{"mode", jsonNum(s.Mode)}, {"mode_ci90", jsonInterval(s.ModeCI)},
		{"p05", jsonNum(s.P05)}, {"p95", jsonNum(s.P95)},
	}
	b := []byte{'{'}
	for i, kv := range m {
		if i > 0 {
			b = append(b, ',')
		}
		kb, _ := json.Marshal(kv.k)
		vb, err := json.Marshal(kv.v)
		if err != nil {
			return nil, err
		}
		b = append(append(append(b, kb...), ':'), vb...)
	}
	return append(b, '}'), nil
}

// jsonInterval writes a known interval as [lo, hi] and an unknown one as
// null.
func jsonInterval(iv Interval) any {
	if !iv.Known() {
		return nil
	}
	return []float64{iv.Lo, iv.Hi}
}

// UnmarshalJSON reads what MarshalJSON writes: null numbers become NaN (a
// null sc_max is the open upper end, +Inf), null intervals unknown.
func (s *Stats) UnmarshalJSON(b []byte) error {
	var m struct {
		ScMin, ScMax, Mean, Median, Mode, P05, P95 *float64
		N, Tracks                                  int
		MeanCI                                     []float64 `json:"mean_ci90"`
		MedianCI                                   []float64 `json:"median_ci90"`
		ModeCI                                     []float64 `json:"mode_ci90"`
	}
	aux := map[string]json.RawMessage{}
	if err := json.Unmarshal(b, &aux); err != nil {
		return err
	}
	fields := map[string]any{
		"sc_min": &m.ScMin, "sc_max": &m.ScMax, "mean": &m.Mean, "median": &m.Median, "mode": &m.Mode,
		"p05": &m.P05, "p95": &m.P95, "n": &m.N, "tracks": &m.Tracks,
		"mean_ci90": &m.MeanCI, "median_ci90": &m.MedianCI, "mode_ci90": &m.ModeCI,
	}
	for k, raw := range aux {
		if dst, ok := fields[k]; ok {
			if err := json.Unmarshal(raw, dst); err != nil {
				return fmt.Errorf("statistics field %q: %v", k, err)
			}
		}
	}
	num := func(p *float64, null float64) float64 {
		if p == nil {
			return null
		}
		return *p
	}
	iv := func(v []float64) Interval {
		if len(v) != 2 {
			return NoInterval()
		}
		return Interval{v[0], v[1]}
	}
	nan := math.NaN()
	*s = Stats{
		ScMin: num(m.ScMin, nan), ScMax: num(m.ScMax, math.Inf(1)), N: m.N, Tracks: m.Tracks,
		Mean: num(m.Mean, nan), Median: num(m.Median, nan), Mode: num(m.Mode, nan),
		P05: num(m.P05, nan), P95: num(m.P95, nan),
		MeanCI: iv(m.MeanCI), MedianCI: iv(m.MedianCI), ModeCI: iv(m.ModeCI),
	}
	return nil
}

// jsonNum maps NaN and ±Inf to nil so they encode as null.
func jsonNum(v float64) any {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return v
}

// FileInfo identifies an input or output file.
type FileInfo struct {
	Path   string `json:"path"`
	Bytes  int64  `json:"bytes"`
	SHA256 string `json:"sha256,omitempty"`
}

// DescribeFile returns the size and SHA-256 of a file.
func DescribeFile(path string) (FileInfo, error) {
	f, err := os.Open(path)
	if err != nil {
		return FileInfo{}, err
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return FileInfo{}, fmt.Errorf("cannot read %s: %v", path, err)
	}
	abs, _ := filepath.Abs(path)
	return FileInfo{Path: abs, Bytes: n, SHA256: hex.EncodeToString(h.Sum(nil))}, nil
}

// sortedKeys returns the keys of m in order.
func sortedKeys[V any](m map[string]V) []string {
	k := make([]string, 0, len(m))
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}
