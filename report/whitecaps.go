package report

import (
	"bufio"
	"io"
	"math"
	"reflect"
	"strconv"
	"strings"

	"crestspeed/speed"
)

// WhitecapColumns is the header of whitecaps.csv, one row per whitecap per
// frame.
var WhitecapColumns = []string{
	"whitecap_id", "time_s", "frame", "x_m", "y_m", "front_along_m", "front_across_m",
	"front_length_m", "area_m2", "front_speed_mps", "speed_fit",
	"phase_speed_peak_mps", "phase_speed_local_mps", "ratio_peak", "ratio_local",
	"parent_track_id", "parent_steepness_sc",
}

// WriteWhitecapsCSV writes the whitecap rows.
func WriteWhitecapsCSV(w io.Writer, rows []speed.WhitecapRow) error {
	bw := bufio.NewWriter(w)
	bw.WriteString(joinCSV(WhitecapColumns))
	for _, r := range rows {
		bw.WriteString(joinCSV([]string{
			strconv.Itoa(r.TrackID), num(r.Time), strconv.Itoa(r.Frame), num(r.X), num(r.Y),
			num(r.Front.S), num(r.Front.N), num(r.FrontLength), num(r.Area), num(r.FrontSpeed), r.Fit.String(),
			num(r.PhaseSpeedPeak), num(r.PhaseSpeedLocal), num(r.RatioPeak), num(r.RatioLocal),
			strconv.Itoa(r.ParentTrackID), num(r.ParentSteepness),
		}))
	}
	return bw.Flush()
}

// WriteLambdaCSV writes the Phillips Λ(c) bins.
func WriteLambdaCSV(w io.Writer, b speed.BreakingStats) error {
	bw := bufio.NewWriter(w)
	bw.WriteString(joinCSV(LambdaColumns))
	for _, x := range b.Bins {
		bw.WriteString(joinCSV([]string{num(x.CLow), num(x.CHigh), num(x.Lambda), strconv.Itoa(x.Fronts), num(x.Length)}))
	}
	return bw.Flush()
}

// WriteCoverageCSV writes the whitecap coverage W(t).
func WriteCoverageCSV(w io.Writer, rows []speed.CoverageRow) error {
	bw := bufio.NewWriter(w)
	bw.WriteString(joinCSV(CoverageColumns))
	for _, r := range rows {
		bw.WriteString(joinCSV([]string{num(r.Time), strconv.Itoa(r.Frame), num(r.Coverage),
			strconv.Itoa(r.FoamCells), strconv.Itoa(r.ValidCells), num(r.Area)}))
	}
	return bw.Flush()
}

// WhitecapsSummary is the "whitecaps" block of summary.json.
type WhitecapsSummary struct {
	Whitecaps      int            `json:"n"`
	Rows           int            `json:"rows"`
	FramesAnalysed int            `json:"frames_analysed"`
	Skipped        map[string]int `json:"frames_skipped"`
	MeanCoverage   float64        `json:"mean_coverage"`
	// Front speed ratios per steepness class of the parent crest (rows
	// without a parent count in "all" only).
	Ratio map[string]RatioStats `json:"front_speed_ratio"`
	// Median of each whitecap's whole-track speed over c_p.
	MedianTrackSpeedRatio float64          `json:"median_track_speed_over_cp"`
	PassageRate           float64          `json:"passage_rate_per_s"`
	Dissipation           float64          `json:"dissipation_w_per_m2"`
	BreakingParameter     float64          `json:"breaking_parameter_b"`
	WaterDensity          float64          `json:"water_density_kg_per_m3"`
	LambdaIntegral        float64          `json:"lambda_integral_per_m"`
	LengthOutOfRange      float64          `json:"front_length_out_of_bins_m"`
	LengthWithoutSpeed    float64          `json:"front_length_without_speed_m"`
	Lambda                []map[string]any `json:"lambda"`
	Note                  string           `json:"note"`
}

// BreakingNote states the uncertainty of ε.
const BreakingNote = "epsilon = b rho_w g^-1 * integral of c^5 Lambda(c) dc (Phillips 1985) with a configurable b; published values of b span more than an order of magnitude, so epsilon is an order-of-magnitude estimate. Front speeds are measured from the moving foam front; Lambda(c) counts only fronts seen whole on the grid."

// SummariseWhitecaps builds the whitecaps block.
func SummariseWhitecaps(wc *speed.WhitecapResult, bounds []float64) *WhitecapsSummary {
	if wc == nil {
		return nil
	}
	b := wc.Breaking
	s := &WhitecapsSummary{
		Whitecaps: len(wc.Whitecaps), Rows: len(wc.Rows), FramesAnalysed: wc.FramesAnalysed,
		Skipped: wc.Skipped, MeanCoverage: wc.MeanCoverage,
		PassageRate: b.PassageRate, Dissipation: b.Dissipation, BreakingParameter: b.B, WaterDensity: b.WaterDensity,
		LambdaIntegral: b.MeanFrontLengthPerArea, LengthOutOfRange: b.LengthOutOfRange,
		LengthWithoutSpeed: wc.LengthWithoutSpeed, Note: BreakingNote,
	}
	for _, x := range b.Bins {
		s.Lambda = append(s.Lambda, map[string]any{"speed_min_mps": x.CLow, "speed_max_mps": x.CHigh, "lambda_m-2_s": x.Lambda})
	}
	s.Ratio = map[string]RatioStats{}
	for _, ref := range []string{"peak", "local"} {
		s.Ratio[ref] = classStatistics(len(wc.Rows), bounds, func(i int) (float64, float64, int) {
			r := &wc.Rows[i]
			if ref == "local" {
				return r.RatioLocal, r.ParentSteepness, r.TrackID
			}
			return r.RatioPeak, r.ParentSteepness, r.TrackID
		})
	}
	var tr []float64
	cp := math.NaN()
	if len(wc.Rows) > 0 {
		cp = wc.Rows[0].PhaseSpeedPeak
	}
	for _, w := range wc.Whitecaps {
		if !math.IsNaN(w.TrackSpeed) {
			tr = append(tr, w.TrackSpeed/cp)
		}
	}
	s.MedianTrackSpeedRatio = Summarise(tr, 0, math.Inf(1)).Median
	return s
}

// jsonSafe converts v into maps, slices and numbers that encoding/json can
// write, with NaN and infinite floats as null (JSON has no NaN). Struct
// fields use their json tag names and honour omitempty; values with their
// own MarshalJSON are left to it.
func jsonSafe(v any) any {
	return jsonSafeValue(reflect.ValueOf(v))
}

func jsonSafeValue(v reflect.Value) any {
	if !v.IsValid() {
		return nil
	}
	if m, ok := v.Interface().(interface{ MarshalJSON() ([]byte, error) }); ok && v.Kind() != reflect.Pointer {
		return m
	}
	switch v.Kind() {
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			return nil
		}
		return jsonSafeValue(v.Elem())
	case reflect.Float32, reflect.Float64:
		return jsonNum(v.Float())
	case reflect.Struct:
		out := map[string]any{}
		t := v.Type()
		for i := 0; i < t.NumField(); i++ {
			f := t.Field(i)
			if !f.IsExported() {
				continue
			}
			name, opts, _ := strings.Cut(f.Tag.Get("json"), ",")
			if name == "-" {
				continue
			}
			if name == "" {
				name = f.Name
			}
			if strings.Contains(opts, "omitempty") && v.Field(i).IsZero() {
				continue
			}
			out[name] = jsonSafeValue(v.Field(i))
		}
		return out
	case reflect.Slice, reflect.Array:
		if v.Kind() == reflect.Slice && v.IsNil() {
			return []any{}
		}
		out := make([]any, v.Len())
		for i := range out {
			out[i] = jsonSafeValue(v.Index(i))
		}
		return out
	case reflect.Map:
		out := map[string]any{}
		for _, k := range v.MapKeys() {
			out[k.String()] = jsonSafeValue(v.MapIndex(k))
		}
		return out
	}
	return v.Interface()
}
