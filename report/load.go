package report

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"crestspeed/speed/analysis"
)

// SpectrumColumns is the header of spectrum.csv.
var SpectrumColumns = []string{"frequency_hz", "psd_m2_per_hz"}

// Spectrum is the frequency spectrum of a record: one-sided power spectral
// density of the surface elevation (m²/Hz) at frequencies (Hz).
type Spectrum struct {
	Freq, PSD []float64
}

// WriteSpectrumCSV writes a frequency spectrum as spectrum.csv.
func WriteSpectrumCSV(w io.Writer, freq, psd []float64) error {
	if len(freq) != len(psd) {
		return fmt.Errorf("spectrum has %d frequencies but %d densities", len(freq), len(psd))
	}
	bw := bufio.NewWriter(w)
	bw.WriteString(joinCSV(SpectrumColumns))
	for i := range freq {
		bw.WriteString(joinCSV([]string{num(freq[i]), num(psd[i])}))
	}
	return bw.Flush()
}

// ReadSpectrumCSV reads spectrum.csv: the header of SpectrumColumns, then
// at least three rows of increasing non-negative frequency and a
// non-negative density.
func ReadSpectrumCSV(path string) (Spectrum, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return Spectrum{}, fmt.Errorf("%s does not exist; run \"crestspeed track\" to make it", path)
		}
		return Spectrum{}, fmt.Errorf("cannot read %s: %v", path, err)
	}
	lines := strings.Split(strings.TrimRight(string(b), "\r\n"), "\n")
	if strings.TrimSpace(strings.TrimRight(lines[0], "\r")) != strings.Join(SpectrumColumns, ",") {
		return Spectrum{}, fmt.Errorf("%s does not start with the header %s; regenerate it with \"crestspeed track\"", path, strings.Join(SpectrumColumns, ","))
	}
	var sp Spectrum
	for i, l := range lines[1:] {
		l = strings.TrimRight(l, "\r")
		f := strings.Split(l, ",")
		if len(f) != 2 {
			return Spectrum{}, fmt.Errorf("%s line %d has %d fields, not 2; regenerate it with \"crestspeed track\"", path, i+2, len(f))
		}
		fr, err1 := strconv.ParseFloat(strings.TrimSpace(f[0]), 64)
		ps, err2 := strconv.ParseFloat(strings.TrimSpace(f[1]), 64)
		if err1 != nil || err2 != nil || !(fr >= 0) || !(ps >= 0) || math.IsInf(fr, 0) || math.IsInf(ps, 0) {
			return Spectrum{}, fmt.Errorf("%s line %d: %q is not a pair of non-negative numbers; regenerate it with \"crestspeed track\"", path, i+2, l)
		}
		if n := len(sp.Freq); n > 0 && fr <= sp.Freq[n-1] {
			return Spectrum{}, fmt.Errorf("%s line %d: frequencies must increase; regenerate it with \"crestspeed track\"", path, i+2)
		}
		sp.Freq = append(sp.Freq, fr)
		sp.PSD = append(sp.PSD, ps)
	}
	if len(sp.Freq) < 3 {
		return Spectrum{}, fmt.Errorf("%s holds %d frequencies; a spectrum needs at least 3", path, len(sp.Freq))
	}
	return sp, nil
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
		Hm0: f("hm0_m"), Tp: f("tp_s"), MeanDirection: f("mean_direction_deg"), DirectionSource: s("direction_source"),
		DirectionSpread: f("direction_spread_deg"), Depth: f("depth_m"), DepthSource: s("depth_source"),
		PeakPhaseSpeed: f("peak_phase_speed_mps"), PeakWavelength: f("peak_wavelength_m"),
		CurrentU: f("current_x_mps"), CurrentV: f("current_y_mps"), Vorticity: f("vorticity_per_s"),
	}
	return nil
}

// ReadSummary reads summary.json as written by Summary.JSON.
func ReadSummary(path string) (*Summary, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, fmt.Errorf("%s does not exist; run \"crestspeed track\" to make it", path)
		}
		return nil, fmt.Errorf("cannot read %s: %v", path, err)
	}
	var aux struct {
		Summary
		Masked *float64 `json:"masked_fraction"`
	}
	if err := json.Unmarshal(b, &aux); err != nil {
		return nil, fmt.Errorf("%s is not a crestspeed summary (%v); regenerate it with \"crestspeed track\"", path, err)
	}
	s := aux.Summary
	s.Masked = math.NaN()
	if aux.Masked != nil {
		s.Masked = *aux.Masked
	}
	if err := restoreNaNs(b, &s); err != nil {
		return nil, fmt.Errorf("%s is not a crestspeed summary (%v); regenerate it with \"crestspeed track\"", path, err)
	}
	if s.Tool["name"] != "crestspeed" {
		return nil, fmt.Errorf("%s was not written by crestspeed (no tool name); regenerate it with \"crestspeed track\"", path)
	}
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
	return &s, nil
}

// SteepnessBounds returns the inner steepness-class boundaries the run
// used, as recorded in the summary's method section.
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

// Deployment is everything a report is built from: the crest table, the
// summary of the tracking run, the record's spectrum and, when the record
// had a foam mask, the whitecap files.
type Deployment struct {
	Crests   *CrestTable
	Summary  *Summary
	Spectrum Spectrum
	// Whitecaps holds whitecaps.csv, lambda.csv and coverage.csv; nil when
	// the summary has no whitecaps block (no foam mask analysed).
	Whitecaps *WhitecapFiles
	// TracksDir is the folder the crest files came from.
	TracksDir string
}

// LoadDeployment reads crests.csv, summary.json and spectrum.csv from a
// folder written by "crestspeed track", and whitecaps.csv, lambda.csv and
// coverage.csv when summary.json has whitecap results.
func LoadDeployment(dir string) (*Deployment, error) {
	fi, err := os.Stat(dir)
	if err != nil {
		return nil, fmt.Errorf("track folder %s does not exist; give the folder \"crestspeed track\" wrote", dir)
	}
	if !fi.IsDir() {
		return nil, fmt.Errorf("%s is a file, not a track folder; give the folder \"crestspeed track\" wrote", dir)
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, fmt.Errorf("cannot read track folder %s: %v", dir, err)
	}
	if len(entries) == 0 {
		return nil, fmt.Errorf("track folder %s is empty; run \"crestspeed track\" into it first", dir)
	}
	for _, need := range []string{"crests.csv", "summary.json", "spectrum.csv"} {
		if _, err := os.Stat(filepath.Join(dir, need)); err != nil {
			return nil, fmt.Errorf("track folder %s has no %s; run \"crestspeed track\" into it first", dir, need)
		}
	}
	sum, err := ReadSummary(filepath.Join(dir, "summary.json"))
	if err != nil {
		return nil, err
	}
	tab, err := ReadCrestsCSV(filepath.Join(dir, "crests.csv"))
	if err != nil {
		return nil, err
	}
	sp, err := ReadSpectrumCSV(filepath.Join(dir, "spectrum.csv"))
	if err != nil {
		return nil, err
	}
	d := &Deployment{Crests: tab, Summary: sum, Spectrum: sp, TracksDir: dir}
	if sum.Whitecaps != nil {
		if d.Whitecaps, err = loadWhitecapFiles(dir, sum.Whitecaps); err != nil {
			return nil, err
		}
	}
	return d, nil
}

// DeploymentFromRecord makes the report input from an analysed record and
// the summary WriteTrackOutputs returned for it, without re-reading files.
// The numbers are those of the files: crests.csv keeps every float64 exactly.
func DeploymentFromRecord(rec *analysis.Record, sum *Summary, tracksDir string) *Deployment {
	s := *sum
	return &Deployment{
		Crests:    TableFromRows(rec.Rows),
		Summary:   &s,
		Spectrum:  Spectrum{Freq: append([]float64(nil), rec.SeaState.Freqs...), PSD: append([]float64(nil), rec.SeaState.PSD...)},
		TracksDir: tracksDir,
		Whitecaps: WhitecapFilesFromResult(rec.Whitecaps),
	}
}
