package report

// The analysed record, as package speed gives it, enters the report here
// and only here: the summary of a tracking run, its files, and the
// deployment handed to the report in memory are all made from it in this
// file, so that a change in how the record is delivered is an edit of
// this file alone.

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime/debug"
	"slices"
	"sort"
	"time"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/report/table"
	"crestspeed/speed"
	"crestspeed/speed/analysis"
)

// RunInfo describes the run for provenance.
type RunInfo struct {
	// Gauge is the comparison with an in-situ series; nil without one.
	Gauge *GaugeRun
	// Site places the record; nil when nothing is known of it. When it has
	// a grid heading, directions are also given as true bearings.
	Site            *summary.SiteSummary
	Version         string
	Config          any
	Inputs          []FileInfo
	SteepnessBounds []float64
	Started         time.Time
	// Dominant is the dominant-wave analysis run beside this one (nil:
	// none).
	Dominant *summary.DominantSummary
}

// field is how one column of a table is read from a row of type R.
type field[R any] struct {
	name string
	get  func(*R) float64
}

// fill makes a table of schema s from rows, one field per column, rounded
// to the precision of the file. Every column of s must have its field.
func fill[R any](s *table.Schema, rows []R, fields []field[R]) *table.Table {
	if len(fields) != len(s.Columns) {
		panic("report: " + s.File + " has columns without a field")
	}
	t := table.New(s, len(rows))
	for _, f := range fields {
		col := t.Col(f.name)
		if col == nil {
			panic("report: " + s.File + " has no column " + f.name)
		}
		for i := range rows {
			col[i] = f.get(&rows[i])
		}
	}
	t.Round()
	return t
}

// crestFields map crest rows onto crests.csv.
var crestFields = []field[speed.CrestRow]{
	{"track_id", func(r *speed.CrestRow) float64 { return float64(r.TrackID) }},
	{"time_s", func(r *speed.CrestRow) float64 { return r.Time }},
	{"x_m", func(r *speed.CrestRow) float64 { return r.X }},
	{"y_m", func(r *speed.CrestRow) float64 { return r.Y }},
	{"crest_elevation_m", func(r *speed.CrestRow) float64 { return r.Elevation }},
	{"zero_crossing_width_m", func(r *speed.CrestRow) float64 { return r.Width }},
	{"steepness_sc", func(r *speed.CrestRow) float64 { return r.Steepness }},
	{"crest_speed_mps", func(r *speed.CrestRow) float64 { return r.CrestSpeed }},
	{"phase_speed_peak_mps", func(r *speed.CrestRow) float64 { return r.PhaseSpeedPeak }},
	{"phase_speed_local_mps", func(r *speed.CrestRow) float64 { return r.PhaseSpeedLocal }},
	{"ratio_peak", func(r *speed.CrestRow) float64 { return r.RatioPeak }},
	{"ratio_local", func(r *speed.CrestRow) float64 { return r.RatioLocal }},
	{"frame", func(r *speed.CrestRow) float64 { return float64(r.Frame) }},
	{"along_m", func(r *speed.CrestRow) float64 { return r.S }},
	{"across_m", func(r *speed.CrestRow) float64 { return r.N }},
	{"local_wavelength_m", func(r *speed.CrestRow) float64 { return r.Wavelength }},
	{"crest_length_m", func(r *speed.CrestRow) float64 { return r.Length }},
	{"surface_speed_mps", func(r *speed.CrestRow) float64 { return r.SurfaceSpeed }},
	{"bx", func(r *speed.CrestRow) float64 { return r.BreakingIndex }},
	{"foam", func(r *speed.CrestRow) float64 { return table.FlagValue(r.Foam) }},
}

// whitecapFields map whitecap rows onto whitecaps.csv.
var whitecapFields = []field[speed.WhitecapRow]{
	{"whitecap_id", func(r *speed.WhitecapRow) float64 { return float64(r.TrackID) }},
	{"time_s", func(r *speed.WhitecapRow) float64 { return r.Time }},
	{"frame", func(r *speed.WhitecapRow) float64 { return float64(r.Frame) }},
	{"x_m", func(r *speed.WhitecapRow) float64 { return r.X }},
	{"y_m", func(r *speed.WhitecapRow) float64 { return r.Y }},
	{"front_along_m", func(r *speed.WhitecapRow) float64 { return r.Front.S }},
	{"front_across_m", func(r *speed.WhitecapRow) float64 { return r.Front.N }},
	{"front_length_m", func(r *speed.WhitecapRow) float64 { return r.FrontLength }},
	{"area_m2", func(r *speed.WhitecapRow) float64 { return r.Area }},
	{"front_speed_mps", func(r *speed.WhitecapRow) float64 { return r.FrontSpeed }},
	{"speed_fit", func(r *speed.WhitecapRow) float64 { return float64(r.Fit) }},
	{"phase_speed_peak_mps", func(r *speed.WhitecapRow) float64 { return r.PhaseSpeedPeak }},
	{"phase_speed_local_mps", func(r *speed.WhitecapRow) float64 { return r.PhaseSpeedLocal }},
	{"ratio_peak", func(r *speed.WhitecapRow) float64 { return r.RatioPeak }},
	{"ratio_local", func(r *speed.WhitecapRow) float64 { return r.RatioLocal }},
	{"parent_track_id", func(r *speed.WhitecapRow) float64 { return float64(r.ParentTrackID) }},
	{"parent_steepness_sc", func(r *speed.WhitecapRow) float64 { return r.ParentSteepness }},
}

var lambdaFields = []field[speed.LambdaBin]{
	{"speed_min_mps", func(b *speed.LambdaBin) float64 { return b.CLow }},
	{"speed_max_mps", func(b *speed.LambdaBin) float64 { return b.CHigh }},
	{"lambda_m-2_s", func(b *speed.LambdaBin) float64 { return b.Lambda }},
	{"front_samples", func(b *speed.LambdaBin) float64 { return float64(b.Fronts) }},
	{"front_length_m", func(b *speed.LambdaBin) float64 { return b.Length }},
}

var coverageFields = []field[speed.CoverageRow]{
	{"time_s", func(r *speed.CoverageRow) float64 { return r.Time }},
	{"frame", func(r *speed.CoverageRow) float64 { return float64(r.Frame) }},
	{"coverage", func(r *speed.CoverageRow) float64 { return r.Coverage }},
	{"foam_cells", func(r *speed.CoverageRow) float64 { return float64(r.FoamCells) }},
	{"valid_cells", func(r *speed.CoverageRow) float64 { return float64(r.ValidCells) }},
	{"area_m2", func(r *speed.CoverageRow) float64 { return r.Area }},
}

// tablesOf makes the tables of an analysed record, rounded to the
// precision of their files.
func tablesOf(rec *analysis.Record) *Deployment {
	d := otherTables(rec)
	d.Crests = fill(table.Crests, rec.Rows, crestFields)
	return d
}

// crestsBlock is how many crest rows are made into a table at a time when
// crests.csv is written (about 1.3 MB of table; a variable for the tests).
var crestsBlock = 8192

// writeCrests writes crests.csv from the rows, a block of rows at a time:
// the file is the one the whole table (tablesOf) would write.
func writeCrests(w io.Writer, rows []speed.CrestRow) error {
	bw := table.NewBlockWriter(w, table.Crests)
	for lo := 0; lo < len(rows); lo += crestsBlock {
		if err := bw.Write(fill(table.Crests, rows[lo:min(lo+crestsBlock, len(rows))], crestFields)); err != nil {
			return err
		}
	}
	return bw.Close()
}

// otherTables makes the tables of an analysed record but the crest table.
func otherTables(rec *analysis.Record) *Deployment {
	ss := rec.SeaState
	sp := table.New(table.Spectrum, len(ss.Freqs))
	copy(sp.Cols[0], ss.Freqs)
	copy(sp.Cols[1], ss.PSD)
	sp.Round()
	d := &Deployment{Spectrum: sp}
	if wc := rec.Whitecaps; wc != nil {
		d.Whitecaps = &WhitecapTables{
			Rows:     fill(table.Whitecaps, wc.Rows, whitecapFields),
			Lambda:   fill(table.Lambda, wc.Breaking.Bins, lambdaFields),
			Coverage: fill(table.Coverage, wc.Coverage, coverageFields),
		}
	}
	return d
}

// referenceUncertainty is the standard uncertainty of Tp and of c_p of the
// record (NaN when the estimator gave none); the summary records them and
// the report widens the intervals of c_cr/c_p and c_br/c_p by that of c_p.
func referenceUncertainty(rec *analysis.Record) (tp, cp float64) {
	ss := rec.SeaState
	tp, cp = ss.TpStd, ss.PeakPhaseSpeedStd
	if !(tp > 0) {
		tp = math.NaN()
	}
	if !(cp > 0) {
		cp = math.NaN()
	}
	return tp, cp
}

// buildSummary assembles the summary of the tracking run from the record
// and its tables d: provenance, counts, sea state, and the ratio
// statistics (point estimates; the report adds their intervals).
func buildSummary(rec *analysis.Record, d *Deployment, run RunInfo) *Summary {
	s := &Summary{
		Tool:    map[string]string{"name": "crestspeed", "version": run.Version},
		Caution: summary.Caution, Config: run.Config, Inputs: run.Inputs, Masked: rec.MaskedFraction,
		Timings: map[string]float64{}, Outputs: map[string]string{},
		Warnings: append([]string{}, rec.Warnings...),
		Record:   summary.RecordSummary{Title: rec.Meta.Title, Attributes: rec.Meta.Attrs, TimeUnits: rec.Meta.TimeUnits},
	}
	if s.Record.Attributes == nil {
		s.Record.Attributes = map[string]string{}
	}
	if n := len(rec.Meta.Times); n > 0 {
		s.Record.FirstTimeS, s.Record.LastTimeS = rec.Meta.Times[0], rec.Meta.Times[n-1]
	}
	s.Frames = summary.FramesSummary{InFile: len(rec.Meta.Times), Read: rec.FramesRead, SkippedReasons: map[string]int{},
		MaskedCells: map[string]int64{}, IntervalS: rec.FrameInterval}
	for k, v := range rec.MaskedCells {
		s.Frames.MaskedCells[k] = v
	}
	for k, v := range rec.Skipped {
		s.Frames.SkippedReasons[k] = v
		s.Frames.Skipped += v
	}
	for _, g := range rec.Gaps {
		s.Frames.Gaps = append(s.Frames.Gaps, summary.GapSummary{AfterTimeS: g.Start, BeforeTimeS: g.End, Missing: g.Missing})
	}
	s.SeaState = seaStateOf(rec)
	s.Site = run.Site
	s.Gauge = gaugeSummary(run.Gauge)
	if st := run.Site; st != nil && !math.IsNaN(st.GridHeading) {
		s.SeaState.DirectionToTrue, s.SeaState.DirectionFromTrue = summary.TrueBearings(s.SeaState.MeanDirection, st.GridHeading)
	}
	s.Crests = summary.CrestsSummary{
		Detections: rec.Detections, Tracks: rec.TrackCount, Rows: d.Crests.Len(),
		RowsWithSpeed: d.Crests.Len() - rec.RowsWithoutSpeed, RowsWithoutSpeed: rec.RowsWithoutSpeed,
		Births: rec.Link.Births, Deaths: rec.Link.Deaths, GapsBridged: rec.Link.GapsBridged, Unmatched: rec.Link.Gated,
		EndedByReason: rec.Link.Ended, Steps: rec.Link.Steps, StepResidualM: quantiles(rec.Link.Residuals),
		StepResidualHistogram: histogram(rec.Link.Residuals, residualBins),
		ElevationJumpShare:    rec.ElevationJumpShare,
	}
	s.Ratio = crestRatioStats(d.Crests, run.SteepnessBounds, stats.Options{}, 0)
	s.Whitecaps = whitecapsSummary(rec.Whitecaps, d.Whitecaps, run.SteepnessBounds)
	s.Inception = rec.Inception
	if b := rec.Band; b != nil {
		s.Band = &summary.BandSummary{LowFp: b.LowFp, HighFp: b.HighFp, LowHz: b.LowHz, HighHz: b.HighHz, LowK: b.LowK, HighK: b.HighK}
	}
	s.Dominant = run.Dominant
	s.NoiseLowPassHz = rec.NoiseLowPassHz
	s.Method = trackMethod(rec, run)
	for k, v := range rec.Timings {
		s.Timings[k] = v.Seconds()
	}
	return s
}

// seaStateOf is the sea state of the record.
func seaStateOf(rec *analysis.Record) summary.SeaStateSummary {
	ss := rec.SeaState
	dirSrc, depthSrc := "estimated from the record", "water_depth_m attribute of the input"
	if rec.DirectionGiven {
		dirSrc = "given in the configuration"
	}
	if !rec.DepthFromFile {
		depthSrc = "given in the configuration"
	}
	tpU, cpU := referenceUncertainty(rec)
	return summary.SeaStateSummary{
		Hm0: ss.Hm0, Tp: ss.Tp, TpUncertainty: tpU,
		MeanDirection: rec.Refs.Theta * 180 / math.Pi, DirectionSource: dirSrc,
		DirectionToTrue: math.NaN(), DirectionFromTrue: math.NaN(),
		Hm0Total: ss.Hm0Total, NoiseRMS: noiseRMS(ss), BandLowHz: ss.BandLowHz, BandHighHz: ss.BandHighHz,
		DirectionSpread: ss.DirectionSpread * 180 / math.Pi,
		Depth:           rec.Refs.DepthM, DepthSource: depthSrc,
		PeakPhaseSpeed: rec.Refs.PeakPhaseSpeed, PeakPhaseSpeedUncertainty: cpU, PeakWavelength: rec.Refs.PeakPhaseSpeed * ss.Tp,
		CurrentU: rec.Refs.Current.U, CurrentV: rec.Refs.Current.V, Vorticity: rec.Refs.Vorticity,
	}
}

// whitecapsSummary is the whitecaps block: the record's whitecap results
// and the statistics of the front-speed ratios of its table.
func whitecapsSummary(wc *speed.WhitecapResult, t *WhitecapTables, bounds []float64) *summary.WhitecapsSummary {
	if wc == nil {
		return nil
	}
	b := wc.Breaking
	s := &summary.WhitecapsSummary{
		Whitecaps: len(wc.Whitecaps), Rows: len(wc.Rows), FramesAnalysed: wc.FramesAnalysed,
		Skipped: wc.Skipped, MeanCoverage: wc.MeanCoverage,
		PassageRate: b.PassageRate, Dissipation: b.Dissipation, BreakingParameter: b.B, WaterDensity: b.WaterDensity,
		LambdaIntegral: b.MeanFrontLengthPerArea, LengthOutOfRange: b.LengthOutOfRange,
		LengthWithoutSpeed: wc.LengthWithoutSpeed, Note: summary.BreakingNote,
		Ratio: whitecapRatioStats(t.Rows, bounds, stats.Options{}, 0),
	}
	for _, x := range b.Bins {
		s.Lambda = append(s.Lambda, map[string]any{"speed_min_mps": x.CLow, "speed_max_mps": x.CHigh, "lambda_m-2_s": x.Lambda})
	}
	var tr []float64
	for _, w := range wc.Whitecaps {
		if len(wc.Rows) > 0 && !math.IsNaN(w.TrackSpeed) {
			tr = append(tr, w.TrackSpeed/wc.Rows[0].PhaseSpeedPeak)
		}
	}
	s.MedianTrackSpeedRatio = stats.Median(tr)
	return s
}

// trackMethod is the method section of the tracking run.
func trackMethod(rec *analysis.Record, run RunInfo) map[string]any {
	prec := map[string]map[string]string{}
	for _, s := range []*table.Schema{table.Crests, table.Tracks, table.Spectrum, table.Whitecaps, table.Lambda, table.Coverage, table.GaugeSpectrum} {
		m := map[string]string{}
		for _, c := range s.Columns {
			if c.Kind == table.Number {
				m[c.Name] = c.Prec.String()
			}
		}
		prec[s.File] = m
	}
	return map[string]any{
		"steepness":            "S_c = a_c * pi / w_c (a_c crest elevation, w_c zero-crossing width)",
		"steepness_bounds":     run.SteepnessBounds,
		"crest_speed":          "local quadratic (Savitzky-Golay) fit of crest position along the mean direction",
		"crest_speed_window_s": rec.SpeedWindowS,
		"peak_reference":       "linear dispersion at the peak period Tp = 1/F_p, F_p Young's (1995) weighted peak of the Welch spectrum, with depth, current and vorticity",
		"local_reference":      "linear dispersion at the down-crossing to down-crossing wavelength around the crest, median over the speed window",
		"mode":                 "maximum of a Gaussian kernel density estimate, Silverman bandwidth, linearly binned on cells of a quarter bandwidth",
		"percentiles":          "linear interpolation between order statistics (Hyndman & Fan type 7)",
		"csv_precision":        prec,
	}
}

// WriteTrackOutputs writes crests.csv, tracks.csv, spectrum.csv and
// summary.json into dir, and whitecaps.csv, lambda.csv and coverage.csv
// when the record had a foam mask. All files are written to temporaries
// first and renamed together at the end, so a failure leaves none of
// them behind.
func WriteTrackOutputs(dir string, rec *analysis.Record, run RunInfo) (*Summary, error) {
	sum, _, err := writeTrackOutputs(dir, rec, run, false)
	return sum, err
}

// WriteTrackOutputsForReport is WriteTrackOutputs that also returns the
// report input made from the same tables (as DeploymentFromRecord would).
// It lets the record's crest rows go (rec.Rows is nil when it returns):
// crests.csv is written from the rows a block at a time, the rows are
// released, and the crest table of the summary and the report is read back
// from the file, so the rows and the whole table are never held together.
// The numbers are the same: a table's values are those of its file
// (table.Column.Round).
func WriteTrackOutputsForReport(dir string, rec *analysis.Record, run RunInfo) (*Summary, *Deployment, error) {
	sum, d, err := writeTrackOutputs(dir, rec, run, true)
	if err != nil {
		return nil, nil, err
	}
	d.Summary = sum.Copy()
	d.TracksDir = dir
	// as DeploymentFromRecord: the in-memory report input has no gauge
	// spectrum table
	d.GaugeSpectrum = nil
	return sum, d, nil
}

func writeTrackOutputs(dir string, rec *analysis.Record, run RunInfo, release bool) (*Summary, *Deployment, error) {
	var fs fileSet
	defer fs.abort()
	if err := fs.write(dir, "crests.csv", func(f *os.File) error { return writeCrests(f, rec.Rows) }); err != nil {
		return nil, nil, err
	}
	crests, err := readBackCrests(fs.lastTemp(), rec, release)
	if err != nil {
		return nil, nil, err
	}
	d := otherTables(rec)
	d.Crests = crests
	d.GaugeSpectrum = gaugeSpectrum(run.Gauge)
	sum := buildSummary(rec, d, run)
	abs, _ := filepath.Abs(filepath.Join(dir, "crests.csv"))
	sum.Outputs["crests.csv"] = abs
	files := map[string]*table.Table{"tracks.csv": table.SummariseTracks(d.Crests), "spectrum.csv": d.Spectrum}
	if w := d.Whitecaps; w != nil {
		files["whitecaps.csv"], files["lambda.csv"], files["coverage.csv"] = w.Rows, w.Lambda, w.Coverage
	}
	if d.GaugeSpectrum != nil {
		files["gauge_spectrum.csv"] = d.GaugeSpectrum
	}
	for _, name := range append(append([]string{}, TrackOutputs...), whitecapOutputs...) {
		t, ok := files[name]
		if !ok {
			continue
		}
		if err := fs.write(dir, name, func(f *os.File) error { return t.Write(f) }); err != nil {
			return nil, nil, err
		}
		abs, _ := filepath.Abs(filepath.Join(dir, name))
		sum.Outputs[name] = abs
	}
	abs, _ = filepath.Abs(filepath.Join(dir, "summary.json"))
	sum.Outputs["summary.json"] = abs
	js, err := sum.JSON()
	if err != nil {
		return nil, nil, err
	}
	if err := fs.writeBytes(dir, "summary.json", js); err != nil {
		return nil, nil, err
	}
	if err := fs.commit(); err != nil {
		return nil, nil, err
	}
	return sum, d, nil
}

// readBackCrests returns the crest table of the crests.csv just written to
// path from rec.Rows; with release, the rows are let go (and collected)
// before the table is read.
func readBackCrests(path string, rec *analysis.Record, release bool) (*table.Table, error) {
	if !release || len(rec.Rows) == 0 {
		// (a file with no rows is not a table the reader accepts)
		t := fill(table.Crests, rec.Rows, crestFields)
		if release {
			rec.Rows = nil
		}
		return t, nil
	}
	rec.Rows = nil
	debug.FreeOSMemory() // collect the rows and give their pages back
	t, err := table.ReadFile(path, table.Crests)
	if err != nil {
		return nil, fmt.Errorf("the crest table just written cannot be read back: %w", err)
	}
	return t, nil
}

// DeploymentFromRecord makes the report input from an analysed record and
// the summary WriteTrackOutputs returned for it, without re-reading
// files: the numbers are those of the files.
func DeploymentFromRecord(rec *analysis.Record, sum *Summary, tracksDir string) *Deployment {
	d := tablesOf(rec)
	d.Summary = sum.Copy()
	d.TracksDir = tracksDir
	return d
}

// noiseRMS is the RMS of the noise floor removed from Hm0, NaN when the
// spectrum showed none.
func noiseRMS(ss speed.SeaState) float64 {
	if !ss.NoiseFloorFound {
		return math.NaN()
	}
	return ss.NoiseRMS
}

// GaugeRun is the comparison of the maps with a gauge, with where the gauge
// was.
type GaugeRun struct {
	File string
	X, Y float64
	Cmp  *speed.GaugeComparison
}

// gaugeSummary is the gauge block of summary.json.
func gaugeSummary(g *GaugeRun) *summary.GaugeSummary {
	if g == nil || g.Cmp == nil {
		return nil
	}
	c := g.Cmp
	figs := func(ss speed.SeaState) summary.GaugeFigures {
		return summary.GaugeFigures{Hm0: ss.Hm0, Tp: ss.Tp, TpStd: ss.TpStd, NoiseRMS: noiseRMS(ss)}
	}
	return &summary.GaugeSummary{File: g.File, X: g.X, Y: g.Y, StartS: c.StartS, EndS: c.EndS, Samples: c.Samples,
		Maps: figs(c.Maps), Gauge: figs(c.Gauge), LagS: c.LagS, Correlation: c.Correlation,
		ZeroLagCorrelation: c.ZeroLagCorrelation, MaxLagS: c.MaxLagS}
}

// gaugeSpectrum is the table of both spectra, the gauge's interpolated to
// the maps' frequencies where the estimator chose other segments for it.
func gaugeSpectrum(g *GaugeRun) *table.Table {
	if g == nil || g.Cmp == nil {
		return nil
	}
	m, gs := g.Cmp.Maps, g.Cmp.Gauge
	t := table.New(table.GaugeSpectrum, len(m.Freqs))
	for i, f := range m.Freqs {
		t.Cols[0][i], t.Cols[1][i], t.Cols[2][i] = f, m.PSD[i], interpolate(gs.Freqs, gs.PSD, f)
	}
	t.Round()
	return t
}

// interpolate evaluates the piecewise-linear function (xs, ys) at x; NaN
// outside xs.
func interpolate(xs, ys []float64, x float64) float64 {
	i := sort.SearchFloat64s(xs, x)
	switch {
	case i < len(xs) && xs[i] == x:
		return ys[i]
	case i == 0 || i == len(xs):
		return math.NaN()
	}
	w := (x - xs[i-1]) / (xs[i] - xs[i-1])
	return (1-w)*ys[i-1] + w*ys[i]
}

// quantiles summarises v (left unchanged); nil when empty.
func quantiles(v []float64) *summary.QuantileSummary {
	if len(v) == 0 {
		return nil
	}
	w := slices.Clone(v)
	slices.Sort(w)
	q := func(p float64) float64 { return w[int(math.Round(p*float64(len(w)-1)))] }
	return &summary.QuantileSummary{N: len(w), P01: q(0.01), P05: q(0.05), P25: q(0.25), P50: q(0.5), P75: q(0.75), P95: q(0.95), P99: q(0.99)}
}

// residualBins is the number of bins of the step-residual histogram.
const residualBins = 40

// histogram bins v over [p01, p99] widened by a tenth on each side, in n
// equal bins; nil for no values.
func histogram(v []float64, n int) *summary.HistogramSummary {
	q := quantiles(v)
	if q == nil {
		return nil
	}
	pad := 0.1 * (q.P99 - q.P01)
	lo, hi := q.P01-pad, q.P99+pad
	if !(hi > lo) {
		lo, hi = q.P50-0.5, q.P50+0.5
	}
	h := &summary.HistogramSummary{EdgesM: make([]float64, n+1), Counts: make([]int, n)}
	w := (hi - lo) / float64(n)
	for i := range h.EdgesM {
		h.EdgesM[i] = lo + float64(i)*w
	}
	for _, x := range v {
		switch k := int(math.Floor((x - lo) / w)); {
		case x < lo:
			h.Below++
		case k >= n:
			h.Above++
		default:
			h.Counts[k]++
		}
	}
	return h
}
