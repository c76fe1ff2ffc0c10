// Package summary is summary.json, the machine-readable record of a
// tracking run and of its report: provenance (tool, configuration, input
// files with checksums), frames read and skipped, the sea state, counts of
// crests and tracks, the crest-speed ratio statistics per steepness class,
// whitecap and breaking-inception results, timings and the path of every
// output. JSON has no NaN: unknown numbers are written as null and read
// back as NaN.
package summary

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"

	"crestspeed/report/stats"
	"crestspeed/report/table"
	"crestspeed/speed"
)

// Caution is printed in every report and summary.
const Caution = "crestspeed gives research estimates from the recorded data; it is not a safety or navigation system. Defer to local practice and regulations for any decision at sea."

// FileInfo identifies an input or output file.
type FileInfo struct {
	Path   string `json:"path"`
	Bytes  int64  `json:"bytes"`
	SHA256 string `json:"sha256,omitempty"`
}

// DescribeFile returns the absolute path, size and SHA-256 of a file.
func DescribeFile(path string) (FileInfo, error) {
	f, err := os.Open(path)
	if err != nil {
		return FileInfo{}, fmt.Errorf("cannot read %s: %w", path, err)
	}
	defer f.Close()
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return FileInfo{}, fmt.Errorf("cannot read %s: %w", path, err)
	}
	abs, _ := filepath.Abs(path)
	return FileInfo{Path: abs, Bytes: n, SHA256: hex.EncodeToString(h.Sum(nil))}, nil
}

// Summary is summary.json.
type Summary struct {
	Tool     map[string]string           `json:"tool"`
	Caution  string                      `json:"caution"`
	Warnings []string                    `json:"warnings"`
	Config   any                         `json:"config"`
	Inputs   []FileInfo                  `json:"inputs"`
	Record   RecordSummary               `json:"record"`
	Site     *SiteSummary                `json:"site,omitempty"`
	Frames   FramesSummary               `json:"frames"`
	SeaState SeaStateSummary             `json:"sea_state"`
	Masked   float64                     `json:"masked_fraction"`
	Crests   CrestsSummary               `json:"crests"`
	Ratio    map[string]stats.RatioStats `json:"crest_speed_ratio"`
	Method   map[string]any              `json:"method"`
	Timings  map[string]float64          `json:"timings_s"`
	Outputs  map[string]string           `json:"outputs"`
	// Whitecaps and Inception are present when the record had a foam mask
	// and when B_x was computed.
	Whitecaps *WhitecapsSummary `json:"whitecaps,omitempty"`
	// Gauge compares the maps with an in-situ series, when one was given.
	Gauge     *GaugeSummary    `json:"gauge,omitempty"`
	Inception *speed.Inception `json:"inception,omitempty"`
	// NoiseLowPassHz is where the maps were low-passed for crest detection
	// because they carry a noise floor (track.noise_lowpass); 0 when they
	// were not.
	NoiseLowPassHz float64 `json:"noise_lowpass_hz"`
	// Band is the dominant-wave band this analysis found its crests in
	// (track.dominant_band_fp); nil when it took every wave.
	Band *BandSummary `json:"dominant_band,omitempty"`
	// Dominant is the dominant-wave analysis run beside this one, when
	// one was asked for: its band, folder and crest-speed ratios.
	Dominant *DominantSummary `json:"dominant,omitempty"`
}

// BandSummary is a dominant-wave band: in multiples of F_p, in Hz and in
// wavenumber (rad/m); a low edge of 0 is a low-pass.
type BandSummary struct {
	LowFp  float64 `json:"low_over_fp"`
	HighFp float64 `json:"high_over_fp"`
	LowHz  float64 `json:"low_hz"`
	HighHz float64 `json:"high_hz"`
	LowK   float64 `json:"low_wavenumber_rad_per_m"`
	HighK  float64 `json:"high_wavenumber_rad_per_m"`
}

// DominantSummary is the dominant-wave analysis of the same record, kept
// in its own folder (Folder, relative to this one) with its own tables
// and report.
type DominantSummary struct {
	Band          BandSummary                 `json:"band"`
	Folder        string                      `json:"folder"`
	Tracks        int                         `json:"tracks"`
	RowsWithSpeed int                         `json:"rows_with_speed"`
	Ratio         map[string]stats.RatioStats `json:"crest_speed_ratio"`
}

// RecordSummary describes the analysed record: its title and text
// attributes (site, source, ...), the CF units of its time axis (the
// time_s column of crests.csv counts seconds in these units; "" when the
// input gave none) and the time span covered.
type RecordSummary struct {
	Title      string            `json:"title"`
	Attributes map[string]string `json:"attributes"`
	TimeUnits  string            `json:"time_units"`
	FirstTimeS float64           `json:"first_time_s"`
	LastTimeS  float64           `json:"last_time_s"`
}

// FramesSummary counts frames.
type FramesSummary struct {
	InFile         int            `json:"in_file"`
	Read           int            `json:"read"`
	Skipped        int            `json:"skipped"`
	SkippedReasons map[string]int `json:"skipped_reasons"`
	// MaskedCells counts cells masked on reading (valid range,
	// implausible elevations, spikes), by reason.
	MaskedCells map[string]int64 `json:"masked_cells_by_reason"`
	Gaps        []GapSummary     `json:"gaps"`
	IntervalS   float64          `json:"interval_s"`
}

// GapSummary is one dropped-frame gap.
type GapSummary struct {
	AfterTimeS  float64 `json:"after_time_s"`
	BeforeTimeS float64 `json:"before_time_s"`
	Missing     int     `json:"missing_frames"`
}

// SeaStateSummary is the sea state of the record.
type SeaStateSummary struct {
	// Hm0 is 4√ of the variance in the waves' band (BandLowHz–BandHighHz)
	// with the noise floor removed; Hm0Total is 4√ of the whole variance;
	// NoiseRMS the RMS of the white noise floor removed (NaN, null, when
	// the spectrum shows no floor).
	Hm0        float64 `json:"hm0_m"`
	Hm0Total   float64 `json:"hm0_total_m"`
	NoiseRMS   float64 `json:"noise_rms_m"`
	BandLowHz  float64 `json:"wave_band_low_hz"`
	BandHighHz float64 `json:"wave_band_high_hz"`
	Tp         float64 `json:"tp_s"`
	// TpUncertainty and PeakPhaseSpeedUncertainty are the standard
	// uncertainties of Tp and c_p, NaN (null) when the analysis gave none;
	// a known c_p uncertainty widens the intervals of c_cr/c_p and
	// c_br/c_p.
	TpUncertainty float64 `json:"tp_uncertainty_s"`
	// MeanDirection is the direction of travel θ0 in the grid's frame:
	// degrees counter-clockwise from the grid's +x axis.
	MeanDirection float64 `json:"mean_direction_deg"`
	// DirectionToTrue and DirectionFromTrue are θ0 as true bearings,
	// degrees clockwise from true north, of where the waves travel to
	// (oceanographic convention) and come from (nautical and meteorological
	// convention); NaN (null) when the grid's heading is unknown.
	DirectionToTrue           float64 `json:"direction_to_deg_true"`
	DirectionFromTrue         float64 `json:"direction_from_deg_true"`
	DirectionSource           string  `json:"direction_source"`
	DirectionSpread           float64 `json:"direction_spread_deg"`
	Depth                     float64 `json:"depth_m"`
	DepthSource               string  `json:"depth_source"`
	PeakPhaseSpeed            float64 `json:"peak_phase_speed_mps"`
	PeakPhaseSpeedUncertainty float64 `json:"peak_phase_speed_uncertainty_mps"`
	PeakWavelength            float64 `json:"peak_wavelength_m"`
	CurrentU                  float64 `json:"current_x_mps"`
	CurrentV                  float64 `json:"current_y_mps"`
	Vorticity                 float64 `json:"vorticity_per_s"`
}

// PeakSpeedRelativeUncertainty is the relative standard uncertainty of
// c_p, 0 when unknown.
func (ss SeaStateSummary) PeakSpeedRelativeUncertainty() float64 {
	u := ss.PeakPhaseSpeedUncertainty / ss.PeakPhaseSpeed
	if !(u > 0) || math.IsInf(u, 0) {
		return 0
	}
	return u
}

// UnmarshalJSON reads the sea state as written (null numbers become NaN).
func (ss *SeaStateSummary) UnmarshalJSON(b []byte) error {
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		return err
	}
	f := func(k string) float64 {
		if v, ok := m[k].(float64); ok {
			return v
		}
		return math.NaN()
	}
	s := func(k string) string { v, _ := m[k].(string); return v }
	*ss = SeaStateSummary{
		Hm0: f("hm0_m"), Tp: f("tp_s"), TpUncertainty: f("tp_uncertainty_s"),
		MeanDirection: f("mean_direction_deg"), DirectionSource: s("direction_source"),
		DirectionSpread: f("direction_spread_deg"), Depth: f("depth_m"), DepthSource: s("depth_source"),
		PeakPhaseSpeed: f("peak_phase_speed_mps"), PeakPhaseSpeedUncertainty: f("peak_phase_speed_uncertainty_mps"),
		PeakWavelength: f("peak_wavelength_m"),
		CurrentU:       f("current_x_mps"), CurrentV: f("current_y_mps"), Vorticity: f("vorticity_per_s"),
	}
	return nil
}

// CrestsSummary counts crests and tracks.
type CrestsSummary struct {
	Detections       int `json:"detections"`
	Tracks           int `json:"tracks"`
	Rows             int `json:"rows"`
	RowsWithSpeed    int `json:"rows_with_speed"`
	RowsWithoutSpeed int `json:"rows_without_speed"`
	Births           int `json:"births"`
	Deaths           int `json:"deaths"`
	GapsBridged      int `json:"gaps_bridged"`
	Unmatched        int `json:"detections_outside_gates"`
	// Quality of the tracking: tracks ended (or split) by reason; the
	// distribution of each frame-to-frame step's measured advance minus
	// its predicted advance (local linear phase speed × Δt), metres; and
	// the share of steps whose crest elevation changed by more than 0.3
	// Hm0.
	EndedByReason map[string]int   `json:"tracks_ended_by_reason,omitempty"`
	Steps         int              `json:"steps"`
	StepResidualM *QuantileSummary `json:"step_residual_advance_m,omitempty"`
	// StepResidualHistogram is the same distribution binned, for the
	// report's figure.
	StepResidualHistogram *HistogramSummary `json:"step_residual_advance_histogram,omitempty"`
	ElevationJumpShare    float64           `json:"share_steps_elevation_change_over_0_3_hm0"`
}

// HistogramSummary is a distribution binned: Counts[i] values in
// [EdgesM[i], EdgesM[i+1]); Below and Above count the values outside.
type HistogramSummary struct {
	EdgesM []float64 `json:"edges_m"`
	Counts []int     `json:"counts"`
	Below  int       `json:"below"`
	Above  int       `json:"above"`
}

// QuantileSummary is a distribution by its quantiles.
type QuantileSummary struct {
	N   int     `json:"n"`
	P01 float64 `json:"p01"`
	P05 float64 `json:"p05"`
	P25 float64 `json:"p25"`
	P50 float64 `json:"p50"`
	P75 float64 `json:"p75"`
	P95 float64 `json:"p95"`
	P99 float64 `json:"p99"`
}

// WhitecapsSummary is the "whitecaps" block of summary.json.
type WhitecapsSummary struct {
	Whitecaps      int            `json:"n"`
	Rows           int            `json:"rows"`
	FramesAnalysed int            `json:"frames_analysed"`
	Skipped        map[string]int `json:"frames_skipped"`
	MeanCoverage   float64        `json:"mean_coverage"`
	// Front speed ratios per steepness class of the parent crest (rows
	// without a parent count in "all" only); "tracks" counts whitecaps.
	Ratio map[string]stats.RatioStats `json:"front_speed_ratio"`
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

// JSON encodes the summary, indented, with NaN written as null.
func (s *Summary) JSON() ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(jsonSafe(s)); err != nil {
		return nil, fmt.Errorf("summary cannot be encoded: %w", err)
	}
	return buf.Bytes(), nil
}

// Copy returns a copy with its own maps and whitecaps block, so that
// additions to it do not change s.
func (s *Summary) Copy() *Summary {
	c := *s
	c.Tool = copyMap(s.Tool)
	c.Outputs = copyMap(s.Outputs)
	c.Timings = copyMap(s.Timings)
	c.Method = copyMap(s.Method)
	c.Ratio = copyMap(s.Ratio)
	if s.Whitecaps != nil {
		w := *s.Whitecaps
		w.Ratio = copyMap(s.Whitecaps.Ratio)
		c.Whitecaps = &w
	}
	return &c
}

func copyMap[V any](m map[string]V) map[string]V {
	out := make(map[string]V, len(m))
	for k, v := range m {
		out[k] = v
	}
	return out
}

// Read reads summary.json as Summary.JSON writes it; a file that is not
// a summary written by crestspeed is a *table.Error.
func Read(path string) (*Summary, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("%s does not exist: %w", path, err)
		}
		return nil, fmt.Errorf("cannot read %s: %w", path, err)
	}
	var aux struct {
		Summary
		Masked *float64 `json:"masked_fraction"`
	}
	bad := func(err error) error {
		return &table.Error{File: path, Msg: "is not a crestspeed summary (" + err.Error() + ")"}
	}
	if err := json.Unmarshal(b, &aux); err != nil {
		return nil, bad(err)
	}
	s := aux.Summary
	s.Masked = math.NaN()
	if aux.Masked != nil {
		s.Masked = *aux.Masked
	}
	if err := restoreNaNs(b, &s); err != nil {
		return nil, bad(err)
	}
	if s.Tool["name"] != "crestspeed" {
		return nil, bad(errors.New("no tool name"))
	}
	s.fillMaps()
	return &s, nil
}

// fillMaps makes the maps a summary read from a file may lack.
func (s *Summary) fillMaps() {
	if s.Timings == nil {
		s.Timings = map[string]float64{}
	}
	if s.Outputs == nil {
		s.Outputs = map[string]string{}
	}
	if s.Method == nil {
		s.Method = map[string]any{}
	}
	if s.Frames.SkippedReasons == nil {
		s.Frames.SkippedReasons = map[string]int{}
	}
}

// SteepnessBounds returns the inner steepness-class boundaries the run
// used, as recorded in the method section.
func (s *Summary) SteepnessBounds() ([]float64, error) {
	switch v := s.Method["steepness_bounds"].(type) {
	case []float64:
		return v, nil
	case []any:
		out := make([]float64, len(v))
		for i, x := range v {
			f, ok := x.(float64)
			if !ok || !(f > 0) {
				return nil, fmt.Errorf("steepness class boundary %v is not a positive number", x)
			}
			if i > 0 && f <= out[i-1] {
				return nil, fmt.Errorf("steepness class boundaries %v do not increase", v)
			}
			out[i] = f
		}
		return out, nil
	}
	return nil, errors.New("the summary does not record the steepness class boundaries (method.steepness_bounds)")
}

// SiteSummary places the record: the site and platform names and the
// grid's georeference (NaN, written null, where unknown).
type SiteSummary struct {
	Name     string `json:"name,omitempty"`
	Platform string `json:"platform,omitempty"`
	// GridHeading is the bearing of the grid's +x axis, degrees clockwise
	// from true north; Source says where it came from.
	GridHeading float64 `json:"grid_heading_deg"`
	Source      string  `json:"georeference_source"`
	// Latitude and Longitude (WGS 84) of the grid's origin.
	Latitude  float64 `json:"latitude_deg"`
	Longitude float64 `json:"longitude_deg"`
}

// TrueBearings turns a direction in the grid frame (degrees
// counter-clockwise from +x) into true bearings (degrees clockwise from
// north, in [0, 360)) of where the waves go to and come from, for a grid
// whose +x axis has the bearing heading.
func TrueBearings(gridDeg, heading float64) (to, from float64) {
	to = math.Mod(heading-gridDeg, 360)
	if to < 0 {
		to += 360
	}
	return to, math.Mod(to+180, 360)
}

// GaugeSummary compares the maps at an instrument's position with the
// instrument's own series, over their common span.
type GaugeSummary struct {
	File string  `json:"file"`
	X    float64 `json:"x_m"`
	Y    float64 `json:"y_m"`
	// StartS and EndS bound the common span, seconds on the maps' time
	// base; Samples counts the samples where both series are known.
	StartS  float64 `json:"start_s"`
	EndS    float64 `json:"end_s"`
	Samples int     `json:"samples"`
	// Maps and Gauge are the two series' figures, by the same estimator.
	Maps  GaugeFigures `json:"maps"`
	Gauge GaugeFigures `json:"gauge"`
	// LagS: the gauge's series lags the maps' by this (positive: later);
	// Correlation at that lag, ZeroLagCorrelation at none; the lag is
	// searched within ±MaxLagS.
	LagS               float64 `json:"lag_s"`
	Correlation        float64 `json:"correlation"`
	ZeroLagCorrelation float64 `json:"correlation_at_zero_lag"`
	MaxLagS            float64 `json:"max_lag_s"`
}

// GaugeFigures are the sea-state figures of one series.
type GaugeFigures struct {
	Hm0      float64 `json:"hm0_m"`
	Tp       float64 `json:"tp_s"`
	TpStd    float64 `json:"tp_uncertainty_s"`
	NoiseRMS float64 `json:"noise_rms_m"`
}
