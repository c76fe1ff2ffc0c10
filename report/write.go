package report

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"sync"
	"time"
)

// ReportOutputs are what WriteReport puts in its folder (besides
// summary.json): the page, the CF trajectories and the figures folder.
var ReportOutputs = []string{"report.html", "crest_tracks.nc", "figures"}

// DefaultHighestCrests is the number of tracks figure 4 follows by default.
const DefaultHighestCrests = 5

// MaxHighestCrests bounds Options.HighestCrests (figure 4 stays legible).
const MaxHighestCrests = 10

// FewTracks is the number of tracks below which a class's statistics are
// flagged in the report as indications only (a choice of this tool).
const FewTracks = 10

// Options configure WriteReport.
type Options struct {
	// Bootstrap configures the confidence intervals.
	Bootstrap BootstrapOptions
	// HighestCrests is the number of tracks in figure 4; 0 means
	// DefaultHighestCrests.
	HighestCrests int
	// SteepnessBounds are the inner steepness-class boundaries; nil means
	// those recorded in the summary of the tracking run.
	SteepnessBounds []float64
	// Version is the version of the tool writing the report.
	Version string
}

// Validate reports the first unusable setting.
func (o Options) Validate() error {
	switch {
	case o.Bootstrap.Resamples < 0 || o.Bootstrap.Resamples > 100000:
		return fmt.Errorf("bootstrap resamples %d is outside 0–100000 (0 means %d)", o.Bootstrap.Resamples, DefaultResamples)
	case o.Bootstrap.Resamples > 0 && o.Bootstrap.Resamples < 100:
		return fmt.Errorf("bootstrap resamples %d is too few for a 90 %% percentile interval; use at least 100 (common practice: 1000)", o.Bootstrap.Resamples)
	case o.HighestCrests < 0 || o.HighestCrests > MaxHighestCrests:
		return fmt.Errorf("number of highest crests %d is outside 1–%d", o.HighestCrests, MaxHighestCrests)
	}
	for i, v := range o.SteepnessBounds {
		if !(v > 0 && v < 2) || (i > 0 && v <= o.SteepnessBounds[i-1]) {
			return fmt.Errorf("steepness class boundaries %v must increase within (0, 2)", o.SteepnessBounds)
		}
	}
	return nil
}

// Result is what WriteReport computed, for callers that print it.
type Result struct {
	Summary     *Summary
	Peak, Local RatioDistributions
	Figures     []Figure
	// Breaking is what the "Whitecaps and breaking" section computed; nil
	// when the deployment has neither whitecap results nor B_x.
	Breaking *BreakingResult
	// HTML is the path of report.html.
	HTML string
}

// WriteReport builds the deployment report from d into dir: report.html
// (self-contained: figures embedded, no scripts, fonts or styles from
// elsewhere; with a "Whitecaps and breaking" section when d has whitecap
// results or B_x), figures/*.png and *.svg, crest_tracks.nc (CF-1.8
// trajectories) and summary.json (the summary of the tracking run with
// the statistics recomputed from the crest table, their bootstrap
// confidence intervals, the report's timings and the path of every
// output). Everything is written to temporary files first and renamed into
// place at the end, so a failure leaves no part of the report behind.
// Existing outputs are replaced; refusing to overwrite is the caller's
// decision.
func WriteReport(dir string, d *Deployment, opt Options) (*Result, error) {
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	if d == nil || d.Crests == nil || d.Crests.Len() == 0 {
		return nil, fmt.Errorf("there are no crest rows to report on in %s", d.TracksDir)
	}
	started := time.Now()
	bounds := opt.SteepnessBounds
	if bounds == nil {
		b, err := d.Summary.SteepnessBounds()
		if err != nil {
			return nil, fmt.Errorf("%s: %v; give the class boundaries explicitly", filepath.Join(d.TracksDir, "summary.json"), err)
		}
		bounds = b
	}
	if opt.HighestCrests == 0 {
		opt.HighestCrests = DefaultHighestCrests
	}
	if len(d.Spectrum.Freq) < 3 {
		return nil, fmt.Errorf("the record's spectrum has %d frequencies; figure 5 needs at least 3", len(d.Spectrum.Freq))
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("cannot create report folder %s: %v", dir, err)
	}
	res := &Result{}
	timings := map[string]float64{}

	// statistics
	t0 := time.Now()
	var wg sync.WaitGroup
	wg.Add(2)
	go func() { defer wg.Done(); res.Peak = DistributionsOf(d.Crests, ColRatioPeak, bounds, opt.Bootstrap) }()
	go func() { defer wg.Done(); res.Local = DistributionsOf(d.Crests, ColRatioLocal, bounds, opt.Bootstrap) }()
	wg.Wait()
	timings["report: statistics and bootstrap"] = time.Since(t0).Seconds()

	// figures
	t0 = time.Now()
	t00 := d.Summary.Record.FirstTimeS
	if math.IsNaN(t00) || (t00 == 0 && d.Summary.Record.LastTimeS == 0) {
		t00 = minFinite(d.Crests.Cols[ColTime])
	}
	fin := &figureInput{tab: d.Crests, peak: res.Peak, local: res.Local, bounds: ClassBounds(bounds),
		spectrum: d.Spectrum, sea: d.Summary.SeaState, t0: t00, highest: opt.HighestCrests}
	if d.Whitecaps != nil || d.Summary.Whitecaps != nil || d.Summary.Inception != nil {
		if d.Whitecaps != nil && d.Summary.Whitecaps == nil {
			return nil, fmt.Errorf("the deployment from %s has whitecap files but its summary has no whitecaps block; rerun \"crestspeed track\"", d.TracksDir)
		}
		fin.breaking = &breakingInput{wc: d.Whitecaps, ws: d.Summary.Whitecaps, inc: d.Summary.Inception}
	}
	figs, err := fin.makeFigures()
	if err != nil {
		return nil, err
	}
	res.Figures = figs
	if fin.breaking != nil {
		res.Breaking = &fin.breaking.out
	}
	timings["report: figures"] = time.Since(t0).Seconds()

	var st staged
	defer st.abort()

	// trajectories
	t0 = time.Now()
	ncTmp, err := st.reserve(dir, "crest_tracks.nc")
	if err != nil {
		return nil, err
	}
	site := d.Summary.Record.Attributes["site"]
	if err := WriteTrajectories(ncTmp, d.Crests, TrajectoryInfo{
		TimeUnits: d.Summary.Record.TimeUnits, Title: d.Summary.Record.Title, Site: site,
		Source: "crestspeed " + opt.Version,
	}); err != nil {
		return nil, fmt.Errorf("cannot write %s: %v", filepath.Join(dir, "crest_tracks.nc"), err)
	}
	timings["report: trajectories NetCDF"] = time.Since(t0).Seconds()

	// figure files
	for _, f := range figs {
		if err := st.write(dir, filepath.Join("figures", f.Name+".png"), f.PNG); err != nil {
			return nil, err
		}
		if err := st.write(dir, filepath.Join("figures", f.Name+".svg"), f.SVG); err != nil {
			return nil, err
		}
	}

	// the summary of the report
	sum := copySummary(d.Summary)
	sum.Ratio = map[string]RatioStats{"peak": res.Peak.Stats(), "local": res.Local.Stats()}
	B := opt.Bootstrap.Resamples
	if B <= 0 {
		B = DefaultResamples
	}
	sum.Method["steepness_bounds"] = bounds
	sum.Method["histogram"] = "normalised histogram, bin width by the Freedman-Diaconis rule 2 IQR n^(-1/3) (Freedman & Diaconis 1981)"
	sum.Method["density"] = "Gaussian kernel density estimate, Silverman (1986) rule-of-thumb bandwidth"
	sum.Method["confidence_intervals"] = fmt.Sprintf("bootstrap percentile intervals at %.0f %%, resampling whole crest tracks with replacement (Efron & Tibshirani 1993)", 100*CILevel)
	sum.Method["bootstrap_resamples"] = B
	sum.Method["bootstrap_seed"] = opt.Bootstrap.Seed
	if res.Breaking != nil && !math.IsNaN(res.Breaking.Reference.Amplitude) {
		sum.Method["lambda_reference_line"] = "Lambda = A c^-6 (Phillips 1985) drawn for comparison: only A fitted, by least squares on log Lambda over the bins above the peak of Lambda; the exponent is not fitted"
		sum.Method["lambda_reference_amplitude_m4_per_s5"] = res.Breaking.Reference.Amplitude
	}
	abs := func(p string) string { a, _ := filepath.Abs(p); return a }
	for _, name := range TrackOutputs {
		if _, ok := sum.Outputs[name]; !ok {
			if _, err := os.Stat(filepath.Join(d.TracksDir, name)); err == nil {
				sum.Outputs[name] = abs(filepath.Join(d.TracksDir, name))
			}
		}
	}
	sum.Outputs["summary.json"] = abs(filepath.Join(dir, "summary.json"))
	sum.Outputs["report.html"] = abs(filepath.Join(dir, "report.html"))
	sum.Outputs["crest_tracks.nc"] = abs(filepath.Join(dir, "crest_tracks.nc"))
	for _, f := range figs {
		for _, ext := range []string{".png", ".svg"} {
			sum.Outputs["figures/"+f.Name+ext] = abs(filepath.Join(dir, "figures", f.Name+ext))
		}
	}
	if opt.Version != "" {
		sum.Tool["report_version"] = opt.Version
	}
	for k, v := range timings {
		sum.Timings[k] = v
	}
	sum.Timings["report"] = time.Since(started).Seconds()

	// the page
	page, err := renderHTML(sum, d, res, bounds, B, opt)
	if err != nil {
		return nil, err
	}
	if err := st.write(dir, "report.html", page); err != nil {
		return nil, err
	}
	js, err := sum.JSON()
	if err != nil {
		return nil, fmt.Errorf("summary cannot be encoded: %v", err)
	}
	if err := st.write(dir, "summary.json", js); err != nil {
		return nil, err
	}
	if err := st.commit(); err != nil {
		return nil, err
	}
	res.Summary = sum
	res.HTML = sum.Outputs["report.html"]
	return res, nil
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

// copySummary copies the summary with its own maps, so that the report's
// additions do not change the caller's value.
func copySummary(s *Summary) *Summary {
	c := *s
	cp := func(m map[string]string) map[string]string {
		out := map[string]string{}
		for k, v := range m {
			out[k] = v
		}
		return out
	}
	c.Tool = cp(s.Tool)
	c.Outputs = cp(s.Outputs)
	c.Timings = map[string]float64{}
	for k, v := range s.Timings {
		c.Timings[k] = v
	}
	c.Method = map[string]any{}
	for k, v := range s.Method {
		c.Method[k] = v
	}
	return &c
}

// staged holds files written under temporary names in their final
// folder's parent, renamed into place together by commit.
type staged struct {
	tmp, final []string
}

// reserve returns a temporary path in dir for a file that will become
// dir/name at commit; the caller writes it.
func (s *staged) reserve(dir, name string) (string, error) {
	f, err := os.CreateTemp(dir, "."+filepath.Base(name)+".part-*")
	if err != nil {
		return "", fmt.Errorf("cannot write in %s: %v", dir, err)
	}
	f.Close()
	os.Remove(f.Name())
	s.tmp = append(s.tmp, f.Name())
	s.final = append(s.final, filepath.Join(dir, name))
	return f.Name(), nil
}

// write stores data under a temporary name in dir, to become dir/name.
func (s *staged) write(dir, name string, data []byte) error {
	f, err := os.CreateTemp(dir, "."+filepath.Base(name)+".part-*")
	if err != nil {
		return fmt.Errorf("cannot write in %s: %v", dir, err)
	}
	s.tmp = append(s.tmp, f.Name())
	s.final = append(s.final, filepath.Join(dir, name))
	if _, err := f.Write(data); err != nil {
		f.Close()
		return fmt.Errorf("cannot write %s: %v", filepath.Join(dir, name), err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("cannot write %s: %v", filepath.Join(dir, name), err)
	}
	if err := os.Chmod(f.Name(), 0o644); err != nil {
		return fmt.Errorf("cannot write %s: %v", filepath.Join(dir, name), err)
	}
	return nil
}

func (s *staged) commit() error {
	// folders first, so that a failure there leaves nothing renamed
	for i := range s.tmp {
		d := filepath.Dir(s.final[i])
		if fi, err := os.Stat(d); err == nil && !fi.IsDir() {
			return fmt.Errorf("cannot write %s: %s is a file, not a folder; move it away", s.final[i], d)
		}
		if err := os.MkdirAll(d, 0o755); err != nil {
			return fmt.Errorf("cannot create %s: %v", d, err)
		}
	}
	for i := range s.tmp {
		if fi, err := os.Stat(s.final[i]); err == nil && fi.IsDir() {
			return fmt.Errorf("cannot write %s: a folder of that name is in the way; move it away", s.final[i])
		}
	}
	for i := range s.tmp {
		if err := os.Rename(s.tmp[i], s.final[i]); err != nil {
			return fmt.Errorf("cannot write %s: %v", s.final[i], err)
		}
		s.tmp[i] = ""
	}
	s.tmp = nil
	return nil
}

func (s *staged) abort() {
	for _, t := range s.tmp {
		if t != "" {
			os.Remove(t)
		}
	}
}

// sortedOutputs lists output names in order, for the page.
func sortedOutputs(m map[string]string) [][2]string {
	keys := sortedKeys(m)
	sort.Strings(keys)
	out := make([][2]string, len(keys))
	for i, k := range keys {
		out[i] = [2]string{k, m[k]}
	}
	return out
}

// prettyJSON indents v for the page.
func prettyJSON(v any) string {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return fmt.Sprint(v)
	}
	return string(b)
}
