package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"time"

	"crestspeed/speed"
	"crestspeed/speed/analysis"
)

// Caution is printed in every report and summary.
const Caution = "crestspeed gives research estimates from the recorded data; it is not a safety or navigation system. Defer to local practice and regulations for any decision at sea."

// RunInfo describes the run for provenance.
type RunInfo struct {
	Version         string
	Config          any
	Inputs          []FileInfo
	SteepnessBounds []float64
	Started         time.Time
}

// Summary is summary.json.
type Summary struct {
	Tool     map[string]string     `json:"tool"`
	Caution  string                `json:"caution"`
	Warnings []string              `json:"warnings"`
	Config   any                   `json:"config"`
	Inputs   []FileInfo            `json:"inputs"`
	Record   RecordSummary         `json:"record"`
	Frames   FramesSummary         `json:"frames"`
	SeaState SeaStateSummary       `json:"sea_state"`
	Masked   float64               `json:"masked_fraction"`
	Crests   CrestsSummary         `json:"crests"`
	Ratio    map[string]RatioStats `json:"crest_speed_ratio"`
	Method   map[string]any        `json:"method"`
	Timings  map[string]float64    `json:"timings_s"`
	Outputs  map[string]string     `json:"outputs"`
	// Whitecaps and Inception are present when the record had a foam mask
	// and when B_x was computed.
	Whitecaps *WhitecapsSummary `json:"whitecaps,omitempty"`
	Inception *speed.Inception  `json:"inception,omitempty"`
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
	Gaps           []GapSummary   `json:"gaps"`
	IntervalS      float64        `json:"interval_s"`
}

// GapSummary is one dropped-frame gap.
type GapSummary struct {
	AfterTimeS  float64 `json:"after_time_s"`
	BeforeTimeS float64 `json:"before_time_s"`
	Missing     int     `json:"missing_frames"`
}

// SeaStateSummary is the sea state of the record.
type SeaStateSummary struct {
	Hm0             float64 `json:"hm0_m"`
	Tp              float64 `json:"tp_s"`
	MeanDirection   float64 `json:"mean_direction_deg"`
	DirectionSource string  `json:"direction_source"`
	DirectionSpread float64 `json:"direction_spread_deg"`
	Depth           float64 `json:"depth_m"`
	DepthSource     string  `json:"depth_source"`
	PeakPhaseSpeed  float64 `json:"peak_phase_speed_mps"`
	PeakWavelength  float64 `json:"peak_wavelength_m"`
	CurrentU        float64 `json:"current_x_mps"`
	CurrentV        float64 `json:"current_y_mps"`
	Vorticity       float64 `json:"vorticity_per_s"`
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
}

// BuildSummary assembles summary.json from an analysed record.
func BuildSummary(rec *analysis.Record, run RunInfo) *Summary {
	ss := rec.SeaState
	s := &Summary{
		Tool:    map[string]string{"name": "crestspeed", "version": run.Version},
		Caution: Caution,
		Config:  run.Config,
		Inputs:  run.Inputs,
		Masked:  rec.MaskedFraction,
		Timings: map[string]float64{},
		Outputs: map[string]string{},
	}
	s.Warnings = append([]string{}, rec.Warnings...)
	s.Record = RecordSummary{Title: rec.Meta.Title, Attributes: rec.Meta.Attrs, TimeUnits: rec.Meta.TimeUnits}
	if s.Record.Attributes == nil {
		s.Record.Attributes = map[string]string{}
	}
	if n := len(rec.Meta.Times); n > 0 {
		s.Record.FirstTimeS, s.Record.LastTimeS = rec.Meta.Times[0], rec.Meta.Times[n-1]
	}
	s.Frames = FramesSummary{InFile: len(rec.Meta.Times), Read: rec.FramesRead, SkippedReasons: map[string]int{}, IntervalS: rec.FrameInterval}
	for k, v := range rec.Skipped {
		s.Frames.SkippedReasons[k] = v
		s.Frames.Skipped += v
	}
	for _, g := range rec.Gaps {
		s.Frames.Gaps = append(s.Frames.Gaps, GapSummary{g.Start, g.End, g.Missing})
	}
	dirSrc, depthSrc := "estimated from the record", "water_depth_m attribute of the input"
	if rec.DirectionGiven {
		dirSrc = "given in the configuration"
	}
	if !rec.DepthFromFile {
		depthSrc = "given in the configuration"
	}
	s.SeaState = SeaStateSummary{
		Hm0: ss.Hm0, Tp: ss.Tp,
		MeanDirection: rec.Refs.Theta * 180 / math.Pi, DirectionSource: dirSrc,
		DirectionSpread: ss.DirectionSpread * 180 / math.Pi,
		Depth:           rec.Refs.DepthM, DepthSource: depthSrc,
		PeakPhaseSpeed: rec.Refs.PeakPhaseSpeed, PeakWavelength: rec.Refs.PeakPhaseSpeed * ss.Tp,
		CurrentU: rec.Refs.Current.U, CurrentV: rec.Refs.Current.V, Vorticity: rec.Refs.Vorticity,
	}
	s.Crests = CrestsSummary{
		Detections: rec.Detections, Tracks: len(rec.Tracks), Rows: len(rec.Rows),
		RowsWithSpeed: len(rec.Rows) - rec.RowsWithoutSpeed, RowsWithoutSpeed: rec.RowsWithoutSpeed,
		Births: rec.Link.Births, Deaths: rec.Link.Deaths, GapsBridged: rec.Link.GapsBridged, Unmatched: rec.Link.Gated,
	}
	s.Ratio = map[string]RatioStats{
		"peak":  ClassStatistics(rec.Rows, run.SteepnessBounds, func(r speed.CrestRow) float64 { return r.RatioPeak }),
		"local": ClassStatistics(rec.Rows, run.SteepnessBounds, func(r speed.CrestRow) float64 { return r.RatioLocal }),
	}
	s.Whitecaps = SummariseWhitecaps(rec.Whitecaps, run.SteepnessBounds)
	s.Inception = rec.Inception
	s.Method = map[string]any{
		"steepness":            "S_c = a_c * pi / w_c (a_c crest elevation, w_c zero-crossing width)",
		"steepness_bounds":     run.SteepnessBounds,
		"crest_speed":          "local quadratic (Savitzky-Golay) fit of crest position along the mean direction",
		"crest_speed_window_s": rec.SpeedWindowS,
		"peak_reference":       "linear dispersion at the spectral peak period (Welch spectrum, parabolic peak), with depth, current and vorticity",
		"local_reference":      "linear dispersion at the down-crossing to down-crossing wavelength around the crest, median over the speed window",
		"mode":                 "maximum of a Gaussian kernel density estimate, Silverman bandwidth",
		"percentiles":          "linear interpolation between order statistics (Hyndman & Fan type 7)",
	}
	for k, v := range rec.Timings {
		s.Timings[k] = v.Seconds()
	}
	return s
}

// JSON encodes the summary with NaN written as null.
func (s *Summary) JSON() ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(jsonSafe(s)); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// TrackOutputs are the files "crestspeed track" writes. spectrum.csv holds
// the record's frequency spectrum (frequency_hz, psd_m2_per_hz), so that
// the report can be rebuilt from the files alone.
var TrackOutputs = []string{"crests.csv", "tracks.csv", "spectrum.csv", "summary.json"}

// WriteTrackOutputs writes crests.csv, tracks.csv, spectrum.csv and
// summary.json into dir.
// All files are written to temporaries first and renamed together at the
// end, so a failure leaves none of them behind.
func WriteTrackOutputs(dir string, rec *analysis.Record, run RunInfo) (*Summary, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("cannot create output folder %s: %v", dir, err)
	}
	sum := BuildSummary(rec, run)
	for _, name := range TrackOutputs {
		abs, _ := filepath.Abs(filepath.Join(dir, name))
		sum.Outputs[name] = abs
	}
	var tw atomicSet
	defer tw.abort()
	if err := tw.write(dir, "crests.csv", func(f *os.File) error { return WriteCrestsCSV(f, rec.Rows) }); err != nil {
		return nil, err
	}
	if err := tw.write(dir, "tracks.csv", func(f *os.File) error { return WriteTracksCSV(f, SummariseTracks(rec.Rows)) }); err != nil {
		return nil, err
	}
	if err := tw.write(dir, "spectrum.csv", func(f *os.File) error {
		return WriteSpectrumCSV(f, rec.SeaState.Freqs, rec.SeaState.PSD)
	}); err != nil {
		return nil, err
	}
	if wc := rec.Whitecaps; wc != nil {
		for name, fill := range map[string]func(*os.File) error{
			"whitecaps.csv": func(f *os.File) error { return WriteWhitecapsCSV(f, wc.Rows) },
			"lambda.csv":    func(f *os.File) error { return WriteLambdaCSV(f, wc.Breaking) },
			"coverage.csv":  func(f *os.File) error { return WriteCoverageCSV(f, wc.Coverage) },
		} {
			if err := tw.write(dir, name, fill); err != nil {
				return nil, err
			}
			abs, _ := filepath.Abs(filepath.Join(dir, name))
			sum.Outputs[name] = abs
		}
	}
	js, err := sum.JSON()
	if err != nil {
		return nil, fmt.Errorf("summary cannot be encoded: %v", err)
	}
	if err := tw.write(dir, "summary.json", func(f *os.File) error { _, err := f.Write(js); return err }); err != nil {
		return nil, err
	}
	if err := tw.commit(); err != nil {
		return nil, err
	}
	return sum, nil
}

// atomicSet writes several files to temporaries and renames them together.
type atomicSet struct {
	tmp, final []string
}

func (a *atomicSet) write(dir, name string, fill func(*os.File) error) error {
	f, err := os.CreateTemp(dir, "."+name+".part-*")
	if err != nil {
		return fmt.Errorf("cannot write in %s: %v", dir, err)
	}
	a.tmp = append(a.tmp, f.Name())
	a.final = append(a.final, filepath.Join(dir, name))
	if err := fill(f); err != nil {
		f.Close()
		return fmt.Errorf("cannot write %s: %v", filepath.Join(dir, name), err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("cannot write %s: %v", filepath.Join(dir, name), err)
	}
	return nil
}

func (a *atomicSet) commit() error {
	for i := range a.tmp {
		// CreateTemp makes files readable by their owner only; outputs are
		// for everybody who can read the folder.
		if err := os.Chmod(a.tmp[i], 0o644); err != nil {
			return fmt.Errorf("cannot write %s: %v", a.final[i], err)
		}
		if err := os.Rename(a.tmp[i], a.final[i]); err != nil {
			return fmt.Errorf("cannot write %s: %v", a.final[i], err)
		}
	}
	a.tmp = nil
	return nil
}

func (a *atomicSet) abort() {
	for _, t := range a.tmp {
		os.Remove(t)
	}
}
