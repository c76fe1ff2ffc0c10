package campaign

import (
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"crestspeed/ingest"
	"crestspeed/report/figures"
	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/report/table"
	"crestspeed/speed"
)

// Result is what Analyse computed: the campaign's summary, the pooled
// distributions (with curves, for the figures), deployments.csv, Λ(c/c_p)
// and the time axis of the pooled trajectories.
type Result struct {
	Summary     *summary.Campaign
	Deployments []Deployment
	// Bounds are the inner steepness-class boundaries of the campaign.
	Bounds []float64
	// Peak and Local are the pooled distributions of c_cr/c_p and
	// c_cr/c_loc, Front those of c_br/c_p (empty without whitecaps).
	Peak, Local, Front stats.Distributions
	// Table is deployments.csv.
	Table *table.Table
	// Lambda are the Λ(c/c_p) curves of the deployments with whitecaps,
	// PooledLambda the pooled one (nil without whitecaps).
	Lambda       []figures.LambdaCurve
	PooledLambda *figures.LambdaCurve
	// TimeUnits are the units of the time of the pooled trajectories,
	// Offsets the seconds added to each deployment's times (see
	// poolTimeAxis); TimeLong the long name of a time without reference.
	TimeUnits, TimeLong string
	Offsets             []float64
	// Options are the options used, defaults filled.
	Options Options
	started time.Time
}

// ratioNames are the two references of the ratios, as in summary.json.
var ratioNames = []string{"peak", "local"}

// Analyse checks that the deployments can be pooled (see the package
// documentation) and computes the campaign: each deployment's figures and
// statistics, and the pooled statistics with stratified bootstrap
// intervals. It reads nothing; Write writes the result.
func Analyse(deps []Deployment, opt Options) (*Result, error) {
	started := time.Now()
	if err := opt.Validate(); err != nil {
		return nil, err
	}
	opt = opt.withDefaults()
	if len(deps) == 0 {
		return nil, fmt.Errorf("a campaign needs at least one deployment")
	}
	for _, d := range deps {
		if d.Deployment == nil || d.Crests == nil || d.Summary == nil {
			return nil, fmt.Errorf("a deployment of the campaign has no crest table or summary")
		}
		if d.Whitecaps != nil && d.Summary.Whitecaps == nil {
			return nil, fmt.Errorf("the deployment from %s has whitecap tables but its summary has no whitecaps block; %s", d.TracksDir, table.Advice)
		}
		if cp := d.Summary.SeaState.PeakPhaseSpeed; !(cp > 0) || math.IsInf(cp, 0) {
			return nil, fmt.Errorf("%s records the peak phase speed %g m/s; a campaign normalises by c_p, so it must be positive", filepath.Join(d.TracksDir, "summary.json"), cp)
		}
	}
	common, warnings, err := checkSettings(deps)
	if err != nil {
		return nil, err
	}
	bounds, conversions, err := campaignBounds(deps, opt.SteepnessBounds)
	if err != nil {
		return nil, err
	}
	lambdaBins(deps, conversions)
	res := &Result{Deployments: deps, Bounds: bounds, Options: opt, started: started}
	sum := &summary.Campaign{
		Tool:    map[string]string{"name": "crestspeed", "version": opt.Version},
		Caution: summary.Caution, Warnings: warnings, Config: opt.Config,
		Settings: summary.CampaignSettings{SteepnessBounds: bounds, Reference: common,
			BootstrapResamples: opt.Bootstrap.Resamples, BootstrapSeed: opt.Bootstrap.Seed,
			Resampling:     "whole tracks (whole whitecaps) drawn with replacement within each deployment, as many as it has (stratified bootstrap)",
			MinClassTracks: opt.MinClassTracks, LambdaBinWidth: opt.LambdaBinWidth, LambdaMaxRatio: opt.LambdaMaxRatio,
			WindSpeedAttribute: opt.WindSpeedAttribute, Conversions: []string{}},
		Method: methodText(opt), Timings: map[string]float64{}, Outputs: map[string]string{},
	}
	if sum.Warnings == nil {
		sum.Warnings = []string{}
	}
	for _, c := range conversions {
		sum.Settings.Conversions = append(sum.Settings.Conversions, c...)
	}
	so := stats.Options{Intervals: true, Bootstrap: opt.Bootstrap}
	var pool pooled
	haveWind := 0
	for i, d := range deps {
		ds := describeDeployment(i, d, opt, bounds, so)
		ds.Conversions = append([]string{}, conversions[i]...)
		if w, msg := windSpeed(d, opt.WindSpeedAttribute); msg != "" {
			sum.Warnings = append(sum.Warnings, msg)
		} else if !math.IsNaN(w) {
			ds.WindSpeed, ds.WaveAge = w, ds.PeakPhaseSpeed/w
			haveWind++
		}
		sum.Inputs = append(sum.Inputs, d.Inputs...)
		pool.add(i, d)
		if d.Whitecaps != nil {
			lam, fronts, err := lambdaRatio(d, opt)
			if err != nil {
				return nil, err
			}
			ds.Lambda = lam
			pool.fronts = append(pool.fronts, fronts...)
			pool.frames += lam.Frames
			res.Lambda = append(res.Lambda, curveOf(strconv.Itoa(i+1), lam))
		}
		sum.Campaign.Deployments = append(sum.Campaign.Deployments, ds)
	}
	if sum.Inputs == nil {
		sum.Inputs = []summary.FileInfo{}
	}
	if err := pool.describe(res, sum, bounds, so); err != nil {
		return nil, err
	}
	sum.Campaign.PeakSteepness = "H_m0 k_p / 2 with k_p = 2 pi / (c_p T_p), the wavenumber at the peak period by the linear dispersion relation with the deployment's depth and current (c_p seen from the fixed rig)"
	switch {
	case haveWind == len(deps):
		sum.Campaign.WaveAge = fmt.Sprintf("c_p / U with U the wind speed of the record attribute %q (m/s)", opt.WindSpeedAttribute)
	case haveWind > 0:
		sum.Campaign.WaveAge = fmt.Sprintf("c_p / U for the %d of %d deployments whose record has the attribute %q (wind speed U, m/s); unavailable for the others", haveWind, len(deps), opt.WindSpeedAttribute)
	default:
		sum.Campaign.WaveAge = fmt.Sprintf("unavailable: no deployment's record has the attribute %q with a wind speed in m/s", opt.WindSpeedAttribute)
	}
	res.TimeUnits, res.TimeLong, res.Offsets = poolTimeAxis(deps)
	res.Summary = sum
	res.Table = deploymentsTable(sum.Campaign.Deployments, bounds)
	sum.Timings["campaign: statistics and bootstrap"] = time.Since(started).Seconds()
	return res, nil
}

// describeDeployment gives a deployment's sea state, counts and its own
// statistics on the campaign's classes.
func describeDeployment(i int, d Deployment, opt Options, bounds []float64, so stats.Options) summary.DeploymentSummary {
	s := d.Summary
	ss := s.SeaState
	nan := math.NaN()
	ds := summary.DeploymentSummary{
		Index: i + 1, Folder: absPath(d.TracksDir), Site: s.Record.Attributes["site"],
		DurationS: s.Record.LastTimeS - s.Record.FirstTimeS, FramesRead: s.Frames.Read,
		Hm0: ss.Hm0, Tp: ss.Tp, PeakPhaseSpeed: ss.PeakPhaseSpeed, PeakWavelength: ss.PeakWavelength,
		PeakSpeedUncertainty: nan, MeanDirection: ss.MeanDirection, Depth: ss.Depth,
		WindSpeed: nan, WaveAge: nan,
		CrestTracks: len(table.TrackRuns(d.Crests)) - 1, CrestRows: d.Crests.Len(),
		HasWhitecaps: d.Whitecaps != nil, RecordInputs: s.Inputs,
	}
	if ds.RecordInputs == nil {
		ds.RecordInputs = []summary.FileInfo{}
	}
	if u := ss.PeakSpeedRelativeUncertainty(); u > 0 {
		ds.PeakSpeedUncertainty = u
	}
	if !(ds.Depth > 0) {
		ds.Depth = nan // deep water
	}
	for _, v := range d.Crests.Cols[table.CrestSpeed] {
		if !math.IsNaN(v) {
			ds.CrestRowsWithSpeed++
		}
	}
	// k_p = ω_p / c_p = 2π/(c_p T_p): c_p is ω/k seen from the rig, with the current
	ds.PeakSteepness = ss.Hm0 * (2 * math.Pi / (ss.PeakPhaseSpeed * ss.Tp)) / 2
	if ref, ok := ingest.TimeReference(s.Record.TimeUnits); ok {
		ds.StartUTC = utcText(ref, s.Record.FirstTimeS)
		ds.EndUTC = utcText(ref, s.Record.LastTimeS)
	}
	u := ss.PeakSpeedRelativeUncertainty()
	ds.CrestRatio = ratioStats(d.Crests, table.CrestRatioPeak, table.CrestRatioLocal, table.CrestSteepness, table.CrestTrack, bounds, so, u)
	if w := d.Whitecaps; w != nil {
		ds.WhitecapRows = w.Rows.Len()
		ds.WhitecapTracks = len(trajectoryStarts(w.Rows.Cols[table.WhitecapID]))
		if ws := s.Whitecaps; ws != nil {
			ds.WhitecapTracks = ws.Whitecaps
		}
		ds.FrontRatio = ratioStats(w.Rows, table.WhitecapRatioPeak, table.WhitecapRatioLocal, table.WhitecapSteepness, table.WhitecapID, bounds, so, u)
	}
	return ds
}

// ratioStats describes the two ratios of a table by steepness class, as
// the deployment report does: the c_p uncertainty u widens the peak
// ratio's intervals.
func ratioStats(t *table.Table, peak, local, by, ids int, bounds []float64, so stats.Options, u float64) map[string]stats.RatioStats {
	out := map[string]stats.RatioStats{}
	for _, name := range ratioNames {
		o := so
		col := local
		o.ScaleUncertainty = 0
		if name == "peak" {
			col, o.ScaleUncertainty = peak, u
		}
		out[name] = stats.Describe(stats.Classify(t.Cols[col], t.Cols[by], t.Cols[ids], bounds), o).Stats()
	}
	return out
}

// pooled gathers the rows of all deployments: per ratio the values, the
// steepness, the unit identifiers and the deployment (stratum) of each
// row, and the fronts of Λ(c/c_p).
type pooled struct {
	crest, front [2]columns // peak, local
	// uCrest and uFront accumulate Σ n_d² u_d² and n_d of the peak ratio
	// (see scaleUncertainty).
	uCrest, uFront uncertainty
	fronts         []speed.FrontSample
	frames         int
}

// columns are the concatenated columns of one ratio.
type columns struct {
	values, by, ids, strata []float64
}

func (c *columns) add(d int, values, by, ids []float64) {
	c.values = append(c.values, values...)
	c.by = append(c.by, by...)
	c.ids = append(c.ids, ids...)
	for range values {
		c.strata = append(c.strata, float64(d))
	}
}

// uncertainty combines the relative standard uncertainties u_d of the c_p
// of the deployments, each shared by the n_d rows of its deployment.
type uncertainty struct {
	sumSq, n, unknown float64
}

func (u *uncertainty) add(values []float64, ud float64) {
	n := 0.0
	for _, v := range values {
		if !math.IsNaN(v) {
			n++
		}
	}
	if ud > 0 {
		u.sumSq += n * n * ud * ud
	} else {
		u.unknown += n
	}
	u.n += n
}

// relative is the relative standard uncertainty of a pooled statistic
// from the independent errors of the deployments' c_p: a statistic of the
// pooled rows moves by about Σ_d w_d δ_d times itself when the rows of
// deployment d are scaled by 1 + δ_d, w_d = n_d/N its share of the rows,
// so u = √(Σ w_d² u_d²) (the law of propagation of uncertainty for
// uncorrelated inputs, JCGM 100:2008 §5.1; the shares of all rows, not
// those of each class).
func (u uncertainty) relative() float64 {
	if u.n == 0 || u.sumSq == 0 {
		return 0
	}
	return math.Sqrt(u.sumSq) / u.n
}

func (p *pooled) add(i int, d Deployment) {
	c := d.Crests.Cols
	u := d.Summary.SeaState.PeakSpeedRelativeUncertainty()
	p.crest[0].add(i, c[table.CrestRatioPeak], c[table.CrestSteepness], c[table.CrestTrack])
	p.crest[1].add(i, c[table.CrestRatioLocal], c[table.CrestSteepness], c[table.CrestTrack])
	p.uCrest.add(c[table.CrestRatioPeak], u)
	if d.Whitecaps != nil {
		w := d.Whitecaps.Rows.Cols
		p.front[0].add(i, w[table.WhitecapRatioPeak], w[table.WhitecapSteepness], w[table.WhitecapID])
		p.front[1].add(i, w[table.WhitecapRatioLocal], w[table.WhitecapSteepness], w[table.WhitecapID])
		p.uFront.add(w[table.WhitecapRatioPeak], u)
	}
}

// describe computes the pooled statistics and Λ(c/c_p) into res and sum.
func (p *pooled) describe(res *Result, sum *summary.Campaign, bounds []float64, so stats.Options) error {
	cb := &sum.Campaign
	cb.CrestRatio = map[string]stats.RatioStats{}
	dist := func(c columns, u float64, curves bool) stats.Distributions {
		o := so
		o.ScaleUncertainty, o.Curves = u, curves
		return stats.Describe(stats.ClassifyStratified(c.values, c.by, c.ids, c.strata, bounds), o)
	}
	res.Peak = dist(p.crest[0], p.uCrest.relative(), true)
	res.Local = dist(p.crest[1], 0, false)
	cb.CrestRatio["peak"], cb.CrestRatio["local"] = res.Peak.Stats(), res.Local.Stats()
	if p.uCrest.unknown > 0 && p.uCrest.sumSq > 0 {
		sum.Warnings = append(sum.Warnings, "Some deployments do not record the uncertainty of their c_p; the pooled intervals of c_cr/c_p and c_br/c_p include only the uncertainty of those that do.")
	}
	if len(p.front[0].values) > 0 || p.frames > 0 {
		res.Front = dist(p.front[0], p.uFront.relative(), true)
		local := dist(p.front[1], 0, false)
		cb.FrontRatio = map[string]stats.RatioStats{"peak": res.Front.Stats(), "local": local.Stats()}
	}
	for _, d := range cb.Deployments {
		cb.Counts.Deployments++
		cb.Counts.CrestTracks += d.CrestTracks
		cb.Counts.CrestRows += d.CrestRows
		cb.Counts.CrestRowsWithSpeed += d.CrestRowsWithSpeed
		cb.Counts.FramesRead += d.FramesRead
		if d.HasWhitecaps {
			cb.Counts.DeploymentsWithWhitecap++
			cb.Counts.Whitecaps += d.WhitecapTracks
			cb.Counts.WhitecapRows += d.WhitecapRows
		}
	}
	if p.frames > 0 {
		lam, err := lambdaOf(p.fronts, p.frames, res.Options)
		if err != nil {
			return err
		}
		cb.Lambda = lam
		c := curveOf("pooled", lam)
		res.PooledLambda = &c
	}
	return nil
}

// windSpeed reads the wind speed of a deployment's record attribute: NaN
// without it; msg says why a value present cannot be used.
func windSpeed(d Deployment, attr string) (float64, string) {
	v, ok := d.Summary.Record.Attributes[attr]
	if !ok {
		return math.NaN(), ""
	}
	w, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
	if err != nil || !(w > 0) || math.IsInf(w, 0) {
		return math.NaN(), fmt.Sprintf("track folder %s: the record attribute %s = %q is not a positive wind speed in m/s, so the deployment has no wave age", d.TracksDir, attr, v)
	}
	return w, ""
}

// utcText is the UTC instant ref + s seconds, to the millisecond.
func utcText(ref time.Time, s float64) string {
	if math.IsNaN(s) || math.IsInf(s, 0) || math.Abs(s) > 1e11 {
		return ""
	}
	whole := math.Floor(s)
	t := ref.Add(time.Duration(whole) * time.Second).Add(time.Duration(math.Round((s - whole) * 1e9)))
	return t.UTC().Format("2006-01-02T15:04:05.000Z")
}

// poolTimeAxis is the time axis of the pooled trajectories: seconds since
// the earliest reference time of the deployments when every deployment's
// time axis has one (each deployment's times shifted by the seconds from
// that reference to its own); otherwise each deployment keeps its own
// origin and the time is a plain duration, said so in its long name.
func poolTimeAxis(deps []Deployment) (units, long string, offsets []float64) {
	refs := make([]time.Time, len(deps))
	var earliest time.Time
	for i, d := range deps {
		ref, ok := ingest.TimeReference(d.Summary.Record.TimeUnits)
		if !ok {
			return "", "time from the origin of each deployment's own time axis (the deployments have no common reference time; see the variable deployment)", make([]float64, len(deps))
		}
		refs[i] = ref
		if i == 0 || ref.Before(earliest) {
			earliest = ref
		}
	}
	offsets = make([]float64, len(deps))
	for i, r := range refs {
		offsets[i] = r.Sub(earliest).Seconds()
	}
	return "seconds since " + earliest.UTC().Format(time.RFC3339Nano), "", offsets
}

// trajectoryStarts returns the first row of each run of equal ids.
func trajectoryStarts(ids []float64) []int {
	var out []int
	for i := range ids {
		if i == 0 || ids[i] != ids[i-1] {
			out = append(out, i)
		}
	}
	return out
}

func absPath(p string) string {
	if a, err := filepath.Abs(p); err == nil {
		return a
	}
	return p
}

// deploymentsTable fills deployments.csv.
func deploymentsTable(ds []summary.DeploymentSummary, bounds []float64) *table.Table {
	cb := stats.ClassBounds(bounds)
	t := table.New(table.Deployments(cb), len(ds))
	set := func(name string, i int, v float64) {
		col := t.Col(name)
		if col == nil {
			panic("campaign: deployments.csv has no column " + name) // a programming error, caught by tests
		}
		col[i] = v
	}
	// setGroup fills the five columns c (rows, tracks, median and its
	// interval) of row i from one class's statistics.
	setGroup := func(c []string, i int, s stats.Stats) {
		set(c[0], i, float64(s.N))
		set(c[1], i, float64(s.Tracks))
		set(c[2], i, s.Median)
		set(c[3], i, s.MedianCI.Lo)
		set(c[4], i, s.MedianCI.Hi)
	}
	for i, d := range ds {
		t.TextCol("site")[i] = d.Site
		t.TextCol("track_folder")[i] = d.Folder
		t.TextCol("start_utc")[i] = d.StartUTC
		t.TextCol("end_utc")[i] = d.EndUTC
		for name, v := range map[string]float64{
			"deployment": float64(d.Index), "duration_s": d.DurationS, "frames_read": float64(d.FramesRead),
			"hm0_m": d.Hm0, "tp_s": d.Tp, "peak_phase_speed_mps": d.PeakPhaseSpeed, "peak_wavelength_m": d.PeakWavelength,
			"mean_direction_deg": d.MeanDirection, "depth_m": d.Depth, "peak_steepness": d.PeakSteepness,
			"wind_speed_mps": d.WindSpeed, "wave_age": d.WaveAge, "crest_tracks": float64(d.CrestTracks),
			"crest_rows": float64(d.CrestRows), "crest_rows_with_speed": float64(d.CrestRowsWithSpeed),
			"has_whitecaps": table.FlagValue(d.HasWhitecaps), "whitecap_tracks": float64(d.WhitecapTracks), "whitecap_rows": float64(d.WhitecapRows),
		} {
			set(name, i, v)
		}
		crest := d.CrestRatio["peak"].Groups()
		var front []stats.Stats
		if d.FrontRatio != nil {
			front = d.FrontRatio["peak"].Groups()
		}
		for g, name := range table.DeploymentGroups(len(cb)) {
			c := table.DeploymentClassColumns(name)
			setGroup(c[:5], i, crest[g])
			set(c[5], i, 0)
			set(c[6], i, 0)
			if front != nil {
				setGroup(c[5:], i, front[g])
			}
		}
	}
	t.Round()
	return t
}

// lambdaBins adds to conversions a sentence for each deployment whose
// lambda.csv has speed bins of another width than the first deployment
// with whitecaps (the top bin follows c_p by default, so it differs
// anyway): Λ(c/c_p) is rebuilt from the whitecap rows on the campaign's
// bins, so the bins of lambda.csv do not enter and the pooling is exact.
func lambdaBins(deps []Deployment, conversions [][]string) {
	first, firstDir := 0.0, ""
	for i, d := range deps {
		if d.Whitecaps == nil || d.Whitecaps.Lambda.Len() == 0 {
			continue
		}
		l := d.Whitecaps.Lambda
		width := l.Cols[1][0] - l.Cols[0][0]
		if firstDir == "" {
			first, firstDir = width, d.TracksDir
			continue
		}
		if math.Abs(width-first) > 1e-6*first {
			conversions[i] = append(conversions[i], fmt.Sprintf("track folder %s binned Λ(c) in %.4g m/s, %s in %.4g m/s; "+
				"Λ(c/c_p) is rebuilt from the whitecap rows of each on the campaign's bins of c/c_p, which is exact", d.TracksDir, width, firstDir, first))
		}
	}
}
