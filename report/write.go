package report

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sync"
	"time"

	"crestspeed/report/cf"
	"crestspeed/report/figures"
	"crestspeed/report/page"
	"crestspeed/report/stats"
	"crestspeed/report/table"
)

// Result is what WriteReport computed, for callers that print it.
type Result struct {
	Summary     *Summary
	Peak, Local stats.Distributions
	Figures     []figures.Figure
	// Breaking is what the "Whitecaps and breaking" section computed; nil
	// when the deployment has neither whitecap results nor B_x.
	Breaking *BreakingResult
	// HTML is the path of report.html.
	HTML string
}

// BreakingResult is what the report computed for its "Whitecaps and
// breaking" section.
type BreakingResult struct {
	// FrontRatio are the distributions of the whitecap front-speed ratio
	// c_br/c_p by steepness class of the parent crest (empty without
	// whitecaps).
	FrontRatio stats.Distributions
	// Reference is the c⁻⁶ comparison line of the Λ(c) figure.
	Reference stats.PhillipsReference
	// Notes say, one sentence each, which results or figures are absent
	// and why.
	Notes []string
}

// WriteReport builds the deployment report from d into dir: report.html
// (self-contained, with a "Whitecaps and breaking" section when d has
// whitecap results or B_x), figures/*.png and *.svg, crest_tracks.nc
// (CF-1.8 trajectories) and summary.json (the summary of the tracking run
// with the statistics recomputed from the tables, their bootstrap
// intervals, the report's timings and the path of every output).
// Everything is written to temporary files first and renamed into place
// at the end, so a failure leaves no part of the report behind. Existing
// outputs are replaced; refusing to overwrite is the caller's decision.
func WriteReport(dir string, d *Deployment, opt Options) (*Result, error) {
	started := time.Now()
	bounds, err := prepare(d, &opt)
	if err != nil {
		return nil, err
	}
	timings := map[string]float64{}
	t0 := time.Now()
	res, sum := computeStatistics(d, bounds, opt)
	timings["report: statistics and bootstrap"] = time.Since(t0).Seconds()

	t0 = time.Now()
	out, err := figures.Draw(figureInput(d, res, bounds, opt))
	if err != nil {
		return nil, err
	}
	res.Figures = out.Figures
	if res.Breaking != nil {
		res.Breaking.Reference, res.Breaking.Notes = out.Reference, out.Notes
	}
	timings["report: figures"] = time.Since(t0).Seconds()

	var fs fileSet
	defer fs.abort()
	t0 = time.Now()
	if err := writeTrajectories(&fs, dir, d, opt.Version, opt.Created); err != nil {
		return nil, err
	}
	timings["report: trajectories NetCDF"] = time.Since(t0).Seconds()
	for _, f := range res.Figures {
		for ext, data := range map[string][]byte{".png": f.PNG, ".svg": f.SVG} {
			if err := fs.writeBytes(dir, filepath.Join("figures", f.Name+ext), data); err != nil {
				return nil, err
			}
		}
	}
	finishSummary(sum, d, res, dir, bounds, opt)
	if opt.Reproducible {
		clear(sum.Timings)
	} else {
		for k, v := range timings {
			sum.Timings[k] = v
		}
		sum.Timings["report"] = time.Since(started).Seconds()
	}
	html, err := page.Render(page.Input{Summary: sum, Crests: d.Crests, Figures: res.Figures, Notes: notes(res.Breaking),
		Bounds: bounds, Resamples: opt.Bootstrap.Resamples, Seed: opt.Bootstrap.Seed, Version: opt.Version, MinClassTracks: opt.MinClassTracks, Generated: opt.Created})
	if err != nil {
		return nil, err
	}
	js, err := sum.JSON()
	if err != nil {
		return nil, err
	}
	if err := first(fs.writeBytes(dir, "report.html", html), fs.writeBytes(dir, "summary.json", js), fs.commit()); err != nil {
		return nil, err
	}
	res.Summary, res.HTML = sum, sum.Outputs["report.html"]
	return res, nil
}

// first returns the first error that is not nil.
func first(errs ...error) error {
	for _, e := range errs {
		if e != nil {
			return e
		}
	}
	return nil
}

func notes(b *BreakingResult) []string {
	if b == nil {
		return nil
	}
	return b.Notes
}

// prepare checks the deployment and the options, fills the defaults and
// returns the inner steepness-class boundaries.
func prepare(d *Deployment, opt *Options) ([]float64, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	*opt = opt.withDefaults()
	if d == nil || d.Crests == nil || d.Crests.Len() == 0 || d.Summary == nil {
		where := ""
		if d != nil && d.TracksDir != "" {
			where = " in " + d.TracksDir
		}
		return nil, fmt.Errorf("there are no crest rows to report on%s", where)
	}
	if d.Whitecaps != nil && d.Summary.Whitecaps == nil {
		return nil, fmt.Errorf("the deployment from %s has whitecap tables but its summary has no whitecaps block; %s", d.TracksDir, table.Advice)
	}
	if d.Spectrum == nil || d.Spectrum.Len() < 3 {
		return nil, fmt.Errorf("the record's spectrum has fewer than 3 frequencies; figure 5 needs at least 3")
	}
	if opt.SteepnessBounds != nil {
		return opt.SteepnessBounds, nil
	}
	b, err := d.Summary.SteepnessBounds()
	if err != nil {
		return nil, fmt.Errorf("%s: %w; give the class boundaries explicitly", filepath.Join(d.TracksDir, "summary.json"), err)
	}
	return b, nil
}

// computeStatistics computes the distributions of the crest ratios and,
// with whitecap tables, of the whitecap ratios, with bootstrap intervals;
// it returns them and a copy of the summary that holds them.
func computeStatistics(d *Deployment, bounds []float64, opt Options) (*Result, *Summary) {
	sum := d.Summary.Copy()
	u := sum.SeaState.PeakSpeedRelativeUncertainty()
	so := stats.Options{Intervals: true, Bootstrap: opt.Bootstrap, Curves: true}
	res := &Result{}
	var crest, wc map[string]stats.Distributions
	var wg sync.WaitGroup
	wg.Add(1)
	go func() { defer wg.Done(); crest = crestDistributions(d.Crests, bounds, so, u) }()
	if d.Whitecaps != nil {
		wc = whitecapDistributions(d.Whitecaps.Rows, bounds, so, u)
	}
	wg.Wait()
	res.Peak, res.Local = crest["peak"], crest["local"]
	sum.Ratio = statsOnly(crest)
	if wc != nil {
		sum.Whitecaps.Ratio = statsOnly(wc)
	}
	if d.Whitecaps != nil || sum.Whitecaps != nil || sum.Inception != nil {
		res.Breaking = &BreakingResult{FrontRatio: wc["peak"]}
	}
	return res, sum
}

// figureInput is what the figures are drawn from.
func figureInput(d *Deployment, res *Result, bounds []float64, opt Options) figures.Input {
	t0 := d.Summary.Record.FirstTimeS
	if math.IsNaN(t0) || (t0 == 0 && d.Summary.Record.LastTimeS == 0) {
		t0 = minFinite(d.Crests.Cols[table.CrestTime])
	}
	in := figures.Input{Crests: d.Crests, Peak: res.Peak, Local: res.Local, Bounds: stats.ClassBounds(bounds),
		Spectrum: figures.Spectrum{Freq: d.Spectrum.Cols[0], PSD: d.Spectrum.Cols[1]},
		Sea:      d.Summary.SeaState, T0: t0, Highest: opt.HighestCrests, MinClassTracks: opt.MinClassTracks,
		StepResiduals: d.Summary.Crests.StepResidualHistogram}
	if g := d.GaugeSpectrum; g != nil && d.Summary.Gauge != nil {
		in.Gauge = &figures.Gauge{Freq: g.Cols[0], Maps: g.Cols[1], Gauge: g.Cols[2], Summary: d.Summary.Gauge}
	}
	if res.Breaking != nil {
		in.Breaking = &figures.Breaking{FrontRatio: res.Breaking.FrontRatio, Whitecaps: d.Summary.Whitecaps, Inception: d.Summary.Inception}
		if d.Whitecaps != nil {
			in.Breaking.Lambda, in.Breaking.Coverage = d.Whitecaps.Lambda, d.Whitecaps.Coverage
		}
	}
	return in
}

func minFinite(v []float64) float64 {
	m := math.Inf(1)
	for _, x := range v {
		if x < m {
			m = x
		}
	}
	if math.IsInf(m, 1) {
		return 0
	}
	return m
}

// writeTrajectories writes crest_tracks.nc into the file set, and
// whitecap_tracks.nc when the deployment has whitecap rows; a
// whitecap_tracks.nc of an earlier report without whitecaps is removed.
func writeTrajectories(fs *fileSet, dir string, d *Deployment, version string, created time.Time) error {
	rs := d.Summary.Record
	info := cf.TrajectoryInfo{TimeUnits: rs.TimeUnits, Title: rs.Title, Site: rs.Attributes["site"], Source: "crestspeed " + version, Created: created}
	files := []struct {
		name string
		coll cf.Collection
		rows *table.Table
	}{{"crest_tracks.nc", cf.Crests, d.Crests}}
	if d.Whitecaps != nil && d.Whitecaps.Rows != nil && d.Whitecaps.Rows.Len() > 0 {
		files = append(files, struct {
			name string
			coll cf.Collection
			rows *table.Table
		}{"whitecap_tracks.nc", cf.Whitecaps, cf.ByTrajectory(d.Whitecaps.Rows, cf.Whitecaps)})
	} else if err := os.Remove(filepath.Join(dir, "whitecap_tracks.nc")); err != nil && !errors.Is(err, os.ErrNotExist) {
		return fmt.Errorf("cannot remove the stale %s: %w", filepath.Join(dir, "whitecap_tracks.nc"), err)
	}
	for _, f := range files {
		tmp, err := fs.reserve(dir, f.name)
		if err != nil {
			return err
		}
		if err := cf.WriteCollection(tmp, f.coll, f.rows, info); err != nil {
			return fmt.Errorf("cannot write %s: %w", filepath.Join(dir, f.name), err)
		}
	}
	return nil
}

// finishSummary adds the report's method, versions and outputs to its
// summary.
func finishSummary(sum *Summary, d *Deployment, res *Result, dir string, bounds []float64, opt Options) {
	m := sum.Method
	m["steepness_bounds"] = bounds
	m["histogram"] = "normalised histogram, bin width by the Freedman-Diaconis rule 2 IQR n^(-1/3) (Freedman & Diaconis 1981)"
	m["density"] = "Gaussian kernel density estimate, Silverman (1986) rule-of-thumb bandwidth"
	m["mode"] = "maximum of a Gaussian kernel density estimate, Silverman bandwidth, linearly binned on cells of a quarter bandwidth; the same estimator for the sample and every resample"
	m["confidence_intervals"] = fmt.Sprintf("bootstrap intervals at %.0f %% centred on their estimates, estimate +/- the %.0f %% point of |replicate - estimate|, resampling whole crest tracks (whole whitecaps for whitecap ratios) with replacement (Efron & Tibshirani 1993; symmetric interval, Hall 1988)", 100*stats.Level, 100*stats.Level)
	m["bootstrap_resamples"] = opt.Bootstrap.Resamples
	m["bootstrap_seed"] = opt.Bootstrap.Seed
	m["min_class_tracks"] = opt.MinClassTracks
	if u := sum.SeaState.PeakSpeedRelativeUncertainty(); u > 0 {
		m["reference_uncertainty"] = fmt.Sprintf("relative standard uncertainty %.4g of c_p combined in quadrature (coverage factor of the level) with the sampling half-width of every c_cr/c_p and c_br/c_p interval (JCGM 100:2008)", u)
	} else {
		m["reference_uncertainty"] = "not known for this run: the intervals of c_cr/c_p and c_br/c_p leave out the uncertainty of c_p"
	}
	if b := res.Breaking; b != nil && !math.IsNaN(b.Reference.Amplitude) {
		m["lambda_reference_line"] = "Lambda = A c^-6 (Phillips 1985) drawn for comparison: only A fitted, by least squares on log Lambda over the bins above the peak of Lambda; the exponent is not fitted"
		m["lambda_reference_amplitude_m4_per_s5"] = b.Reference.Amplitude
	}
	abs := func(p string) string { a, _ := filepath.Abs(p); return a }
	for _, name := range append(append([]string{}, TrackOutputs...), whitecapOutputs...) {
		if _, ok := sum.Outputs[name]; !ok {
			if _, err := os.Stat(filepath.Join(d.TracksDir, name)); err == nil && name != "summary.json" {
				sum.Outputs[name] = abs(filepath.Join(d.TracksDir, name))
			}
		}
	}
	for _, name := range []string{"summary.json", "report.html", "crest_tracks.nc"} {
		sum.Outputs[name] = abs(filepath.Join(dir, name))
	}
	if d.Whitecaps != nil && d.Whitecaps.Rows != nil && d.Whitecaps.Rows.Len() > 0 {
		sum.Outputs["whitecap_tracks.nc"] = abs(filepath.Join(dir, "whitecap_tracks.nc"))
	}
	for _, f := range res.Figures {
		for _, ext := range []string{".png", ".svg"} {
			sum.Outputs["figures/"+f.Name+ext] = abs(filepath.Join(dir, "figures", f.Name+ext))
		}
	}
	if opt.Version != "" {
		sum.Tool["report_version"] = opt.Version
	}
}
