package campaign

import (
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"crestspeed/internal/atomicfile"
	"crestspeed/report/cf"
	"crestspeed/report/figures"
	"crestspeed/report/page"
	"crestspeed/report/stats"
	"crestspeed/report/table"
)

// Outputs are what Write puts in its folder (whitecap_tracks.nc only when
// a deployment has whitecaps).
var Outputs = []string{"report.html", "summary.json", "deployments.csv", "crest_tracks.nc", "whitecap_tracks.nc", "figures"}

// methodText is the method section of the campaign's summary.json.
func methodText(opt Options) map[string]any {
	return map[string]any{
		"pooling": "the rows of all deployments taken together: counts, means, medians, percentiles and modes are those of one analysis of the concatenated rows, each deployment's ratios relative to its own c_p and c_loc",
		"confidence_intervals": fmt.Sprintf("bootstrap intervals at %.0f %% centred on their estimates (estimate +/- the %.0f %% point of |replicate - estimate|; Hall 1988), "+
			"%d resamples (seed %d), each drawing within every deployment as many whole crest tracks (whole whitecaps) with replacement as it has: "+
			"the stratified bootstrap of independent samples (Efron & Tibshirani 1993, ch. 8; Davison & Hinkley 1997, sec. 3.2); deployments are fixed strata, not a sample of sea states",
			100*stats.Level, 100*stats.Level, opt.Bootstrap.Resamples, opt.Bootstrap.Seed),
		"reference_uncertainty": "a relative uncertainty u_d of a deployment's c_p widens its own c_cr/c_p and c_br/c_p intervals in quadrature (JCGM 100:2008); the pooled intervals use sqrt(sum (n_d/N)^2 u_d^2), n_d the rows of deployment d",
		"deployment_statistics": "each deployment's statistics as its deployment report computes them (bootstrap over its own tracks), on the campaign's steepness classes",
		"peak_steepness":        "H_m0 k_p / 2, k_p = 2 pi / (c_p T_p)",
		"wave_age":              fmt.Sprintf("c_p / U, U from the record attribute %q (m/s)", opt.WindSpeedAttribute),
		"lambda_normalised":     "Phillips (1985) Lambda from the whitecap rows (front speed, front length, known area of the frame) over the analysed frames, front speeds divided by the deployment's c_p; " + Jacobian,
		"lambda_pooled":         "all fronts of all deployments over all their analysed frames: the frame-weighted mean of the deployments' Lambda(c/c_p)",
		"percentiles":           "linear interpolation between order statistics (Hyndman & Fan type 7)",
		"mode":                  "maximum of a Gaussian kernel density estimate, Silverman bandwidth, linearly binned on cells of a quarter bandwidth",
	}
}

// outputSet writes files under temporary names (internal/atomicfile) and
// renames them into place together at commit, or removes them at abort.
// The figures are written into a temporary folder beside their final one,
// which is renamed into place at commit.
type outputSet struct {
	dir     string
	files   []pending
	figTmp  string
	figures string
}

type pending struct{ tmp, final string }

// reserve returns a temporary path for dir/name, renamed at commit.
func (s *outputSet) reserve(name string) (string, error) {
	final := filepath.Join(s.dir, name)
	tmp, err := atomicfile.TempPath(final)
	if err != nil {
		return "", err
	}
	s.files = append(s.files, pending{tmp, final})
	return tmp, nil
}

// write fills dir/name through fill.
func (s *outputSet) write(name string, fill func(w io.Writer) error) error {
	tmp, err := s.reserve(name)
	if err != nil {
		return err
	}
	f, err := os.OpenFile(tmp, os.O_WRONLY|os.O_TRUNC, 0)
	if err != nil {
		return fmt.Errorf("cannot write %s: %w", filepath.Join(s.dir, name), err)
	}
	if err := fill(f); err != nil {
		f.Close()
		return fmt.Errorf("cannot write %s: %w", filepath.Join(s.dir, name), err)
	}
	return f.Close() // atomicfile.Rename flushes it at commit
}

// figure writes a figure file into the temporary figures folder.
func (s *outputSet) figure(name string, data []byte) error {
	if s.figTmp == "" {
		tmp, err := os.MkdirTemp(s.dir, ".figures.part-")
		if err != nil {
			return fmt.Errorf("cannot write in %s: %w", s.dir, err)
		}
		s.figTmp, s.figures = tmp, filepath.Join(s.dir, "figures")
	}
	p := filepath.Join(s.figTmp, name)
	if err := os.WriteFile(p, data, atomicfile.Mode); err != nil {
		return fmt.Errorf("cannot write %s: %w", filepath.Join(s.dir, "figures", name), err)
	}
	f, err := os.Open(p)
	if err == nil {
		err = f.Sync()
		f.Close()
	}
	return err
}

// commit puts the figures folder, then every file, into place (the last
// file given, summary.json, last of all). An existing figures folder is
// replaced.
func (s *outputSet) commit() error {
	if s.figTmp != "" {
		if err := atomicfile.SyncDir(s.figTmp); err != nil {
			return err
		}
		if err := os.Chmod(s.figTmp, 0o755); err != nil {
			return err
		}
		var old string
		if fi, err := os.Lstat(s.figures); err == nil {
			if !fi.IsDir() {
				return fmt.Errorf("cannot write %s: a file of that name is in the way; move it away", s.figures)
			}
			old = s.figTmp + ".old"
			if err := os.Rename(s.figures, old); err != nil {
				return fmt.Errorf("cannot replace %s: %w", s.figures, err)
			}
		}
		if err := os.Rename(s.figTmp, s.figures); err != nil {
			return fmt.Errorf("cannot write %s: %w", s.figures, err)
		}
		s.figTmp = ""
		if old != "" {
			os.RemoveAll(old)
		}
		if err := atomicfile.SyncDir(s.dir); err != nil {
			return err
		}
	}
	for i, f := range s.files {
		if fi, err := os.Stat(f.final); err == nil && fi.IsDir() {
			return fmt.Errorf("cannot write %s: a folder of that name is in the way; move it away", f.final)
		}
		if err := atomicfile.Rename(f.tmp, f.final); err != nil {
			return err
		}
		s.files[i].tmp = ""
	}
	return nil
}

func (s *outputSet) abort() {
	for _, f := range s.files {
		if f.tmp != "" {
			os.Remove(f.tmp)
		}
	}
	if s.figTmp != "" {
		os.RemoveAll(s.figTmp)
	}
}

// Write writes the campaign into dir: the figures (figures/*.png and
// *.svg), report.html (self-contained), deployments.csv, the crest rows of
// every deployment as CF-1.8 trajectories (crest_tracks.nc) and, when a
// deployment has whitecaps, its whitecap rows too (whitecap_tracks.nc),
// and summary.json with the path of every output. Everything is written
// to temporary files first and renamed into place at the end, so a
// failure leaves no part of it behind. Existing outputs are replaced, and
// a whitecap_tracks.nc of an earlier campaign is removed when this one has
// none; refusing to overwrite is the caller's decision.
func Write(dir string, res *Result) error {
	sum, opt := res.Summary, res.Options
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("cannot create folder %s: %w", dir, err)
	}
	t0 := time.Now()
	figs, notes, err := figures.DrawCampaign(figureInput(res))
	if err != nil {
		return err
	}
	sum.Timings["campaign: figures"] = time.Since(t0).Seconds()
	set := &outputSet{dir: dir}
	defer set.abort()
	for _, f := range figs {
		for ext, data := range map[string][]byte{".png": f.PNG, ".svg": f.SVG} {
			if err := set.figure(f.Name+ext, data); err != nil {
				return err
			}
			sum.Outputs["figures/"+f.Name+ext] = absPath(filepath.Join(dir, "figures", f.Name+ext))
		}
	}
	t0 = time.Now()
	if err := writeTrajectories(set, res); err != nil {
		return err
	}
	sum.Timings["campaign: trajectories NetCDF"] = time.Since(t0).Seconds()
	if err := set.write("deployments.csv", func(w io.Writer) error { return res.Table.Write(w) }); err != nil {
		return err
	}
	for _, name := range []string{"deployments.csv", "report.html", "summary.json"} {
		sum.Outputs[name] = absPath(filepath.Join(dir, name))
	}
	sum.Timings["campaign"] = time.Since(res.started).Seconds()
	html, err := page.RenderCampaign(page.CampaignInput{Summary: sum, Figures: figs, Notes: notes, Bounds: res.Bounds,
		Version: opt.Version, MinClassTracks: opt.MinClassTracks})
	if err != nil {
		return err
	}
	js, err := sum.JSON()
	if err != nil {
		return err
	}
	if err := set.write("report.html", bytesWriter(html)); err != nil {
		return err
	}
	if err := set.write("summary.json", bytesWriter(js)); err != nil {
		return err
	}
	if err := set.commit(); err != nil {
		return err
	}
	if _, ok := sum.Outputs["whitecap_tracks.nc"]; !ok {
		if err := os.Remove(filepath.Join(dir, "whitecap_tracks.nc")); err != nil && !errors.Is(err, os.ErrNotExist) {
			return fmt.Errorf("cannot remove the stale %s: %w", filepath.Join(dir, "whitecap_tracks.nc"), err)
		}
	}
	return nil
}

func bytesWriter(b []byte) func(io.Writer) error {
	return func(w io.Writer) error { _, err := w.Write(b); return err }
}

// writeTrajectories writes the pooled crest (and whitecap) trajectories.
func writeTrajectories(set *outputSet, res *Result) error {
	var crests, wcs []cf.Part
	var labels []string
	for i, d := range res.Deployments {
		crests = append(crests, cf.Part{Rows: d.Crests, TimeOffset: res.Offsets[i]})
		if d.Whitecaps != nil && d.Whitecaps.Rows.Len() > 0 {
			wcs = append(wcs, cf.Part{Rows: cf.ByTrajectory(d.Whitecaps.Rows, cf.Whitecaps), TimeOffset: res.Offsets[i]})
		} else {
			wcs = append(wcs, cf.Part{Rows: table.New(table.Whitecaps, 0)})
		}
		site := d.Summary.Record.Attributes["site"]
		if site == "" {
			site = "no site given"
		}
		labels = append(labels, fmt.Sprintf("%d = %s (%s)", i+1, site, absPath(d.TracksDir)))
	}
	info := cf.TrajectoryInfo{TimeUnits: res.TimeUnits, TimeLong: res.TimeLong, Title: fmt.Sprintf("campaign of %d deployments", len(res.Deployments)),
		Source: "crestspeed " + res.Options.Version, Comment: "Deployments (variable deployment): " + strings.Join(labels, "; ") + "."}
	if s := commonSite(res); s != "" {
		info.Site = s
	}
	for _, f := range []struct {
		name  string
		coll  cf.Collection
		parts []cf.Part
	}{{"crest_tracks.nc", cf.Crests, crests}, {"whitecap_tracks.nc", cf.Whitecaps, wcs}} {
		n := 0
		for _, p := range f.parts {
			n += p.Rows.Len()
		}
		if n == 0 {
			if f.name == "crest_tracks.nc" {
				return fmt.Errorf("there are no crest rows in the campaign's deployments to write")
			}
			continue
		}
		tmp, err := set.reserve(f.name)
		if err != nil {
			return err
		}
		if err := cf.WritePooledTrajectories(tmp, f.coll, f.parts, info); err != nil {
			return fmt.Errorf("cannot write %s: %w", filepath.Join(set.dir, f.name), err)
		}
		res.Summary.Outputs[f.name] = absPath(filepath.Join(set.dir, f.name))
	}
	return nil
}

// commonSite is the site of the deployments when they share one.
func commonSite(res *Result) string {
	site := ""
	for i, d := range res.Deployments {
		s := d.Summary.Record.Attributes["site"]
		if i > 0 && s != site {
			return ""
		}
		site = s
	}
	return site
}

// figureInput is what the campaign figures are drawn from.
func figureInput(res *Result) figures.CampaignInput {
	in := figures.CampaignInput{Peak: res.Peak, Front: res.Front, Bounds: stats.ClassBounds(res.Bounds),
		MinClassTracks: res.Options.MinClassTracks, Lambda: res.Lambda, PooledLambda: res.PooledLambda, LambdaJacobian: Jacobian}
	for _, d := range res.Summary.Campaign.Deployments {
		p := figures.CampaignPoint{Label: fmt.Sprint(d.Index), PeakSteepness: d.PeakSteepness, WaveAge: d.WaveAge,
			Crest: d.CrestRatio["peak"].Groups()}
		if d.FrontRatio != nil {
			p.Front = d.FrontRatio["peak"].Groups()
		}
		in.Deployments = append(in.Deployments, p)
	}
	return in
}
