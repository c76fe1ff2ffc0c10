// Package campaign pools the track outputs of several deployments into
// one campaign report: the crest-speed and whitecap front-speed ratio
// statistics by steepness class over all deployments, each deployment's
// sea state, counts and medians, the medians against peak steepness and
// wave age, and Phillips's Λ against c/c_p for every deployment and
// pooled.
//
// # Model
//
// A campaign is a list of deployments, each a folder the tracking stage
// wrote (read by report.LoadDeployment). Their reference settings — the
// definitions of S_c, c_p and c_loc, the crest-speed fit and the rules
// that decide which crests and whitecaps enter the tables — must agree:
// a deployment that differs is refused with a *SettingError. What can be
// converted exactly is converted and said so: the steepness classes (every
// row carries its S_c, so rows are classed again into the campaign's
// classes) and the speed bins of Λ(c) (Λ(c/c_p) is rebuilt from the
// whitecap rows, whatever bins lambda.csv used).
//
// The pooled statistics are those of all rows of all deployments taken
// together — the same numbers as one analysis of their concatenated rows —
// with bootstrap intervals that resample whole tracks within each
// deployment (stratified; see stats.Describe): deployments are independent
// samples of fixed size, and a resample keeps every deployment's number of
// tracks. Each deployment's own statistics are computed as its deployment
// report computes them, on the campaign's classes.
//
// Write puts report.html, deployments.csv, summary.json, the pooled crest
// (and whitecap) rows as CF-1.8 trajectories and the figures in a folder;
// all appear together or not at all.
package campaign

import (
	"errors"
	"fmt"

	"crestspeed/report"
	"crestspeed/report/stats"
)

// Defaults of the options.
const (
	// DefaultLambdaBinWidth is the width of the bins of c/c_p of
	// Λ(c/c_p) (a choice of this tool: 0.05 resolves the slowdown of
	// breaking fronts, about 0.8 c_p, from c_p).
	DefaultLambdaBinWidth = 0.05
	// DefaultLambdaMaxRatio is the top of the last bin of c/c_p.
	DefaultLambdaMaxRatio = 2.0
	// DefaultWindSpeedAttribute is the record attribute read as the wind
	// speed, m/s.
	DefaultWindSpeedAttribute = "wind_speed_10m_mps"
)

// Options configure a campaign; they are the "campaign" section of the
// configuration.
type Options struct {
	// Bootstrap configures the intervals: bootstrap_resamples (default
	// 1000; 0 means the default) and bootstrap_seed (default 1), as for
	// the deployment report.
	Bootstrap stats.BootstrapOptions `yaml:",inline"`
	// MinClassTracks is the fewest tracks (whitecaps) a steepness class
	// needs not to be marked as an indication only, as for the deployment
	// report; 0 means report.DefaultMinClassTracks (10).
	MinClassTracks int `yaml:"min_class_tracks"`
	// SteepnessBounds are the inner boundaries of the S_c classes of the
	// campaign; empty means those of the first deployment. Deployments
	// with other classes are classed again from their rows (exact).
	SteepnessBounds []float64 `yaml:"steepness_bounds"`
	// LambdaBinWidth is the width of the bins of c/c_p of Λ(c/c_p),
	// dimensionless (default 0.05); LambdaMaxRatio the top of the last bin
	// (default 2).
	LambdaBinWidth float64 `yaml:"lambda_bin_width"`
	LambdaMaxRatio float64 `yaml:"lambda_max_ratio"`
	// WindSpeedAttribute names the attribute of the record (a global text
	// attribute of the elevation-map file, kept in summary.json) that
	// holds the wind speed U in m/s, for the wave age c_p/U (default
	// "wind_speed_10m_mps"). A deployment without it has no wave age.
	WindSpeedAttribute string `yaml:"wind_speed_attribute"`
	// Version is the version of the tool; Config the resolved
	// configuration recorded in summary.json.
	Version string `yaml:"-"`
	Config  any    `yaml:"-"`
}

// DefaultOptions are the options by default.
func DefaultOptions() Options {
	r := report.DefaultOptions()
	return Options{
		Bootstrap:          r.Bootstrap,
		MinClassTracks:     r.MinClassTracks,
		LambdaBinWidth:     DefaultLambdaBinWidth,
		LambdaMaxRatio:     DefaultLambdaMaxRatio,
		WindSpeedAttribute: DefaultWindSpeedAttribute,
	}
}

// Validate reports the first unusable setting.
func (o Options) Validate() error {
	r := report.Options{Bootstrap: o.Bootstrap, MinClassTracks: o.MinClassTracks, SteepnessBounds: o.SteepnessBounds}
	if err := r.Validate(); err != nil {
		return err
	}
	switch {
	case o.LambdaBinWidth < 0 || o.LambdaBinWidth > 1:
		return fmt.Errorf("bin width %g of c/c_p for Λ(c/c_p) is outside 0–1 (0 means %g)", o.LambdaBinWidth, DefaultLambdaBinWidth)
	case o.LambdaMaxRatio < 0 || o.LambdaMaxRatio > 20:
		return fmt.Errorf("top %g of the bins of c/c_p for Λ(c/c_p) is outside 0–20 (0 means %g)", o.LambdaMaxRatio, DefaultLambdaMaxRatio)
	}
	w := o.withDefaults()
	if w.LambdaMaxRatio < w.LambdaBinWidth || w.LambdaMaxRatio/w.LambdaBinWidth > 100000 {
		return fmt.Errorf("bins of %g up to %g in c/c_p for Λ(c/c_p) are not one to 100000 bins; widen the bins or raise the top", w.LambdaBinWidth, w.LambdaMaxRatio)
	}
	return nil
}

// withDefaults fills the settings left at zero.
func (o Options) withDefaults() Options {
	d := DefaultOptions()
	if o.Bootstrap.Resamples == 0 {
		o.Bootstrap.Resamples = d.Bootstrap.Resamples
	}
	if o.MinClassTracks == 0 {
		o.MinClassTracks = d.MinClassTracks
	}
	if o.LambdaBinWidth == 0 {
		o.LambdaBinWidth = d.LambdaBinWidth
	}
	if o.LambdaMaxRatio == 0 {
		o.LambdaMaxRatio = d.LambdaMaxRatio
	}
	if o.WindSpeedAttribute == "" {
		o.WindSpeedAttribute = d.WindSpeedAttribute
	}
	return o
}

// SettingError is a deployment whose reference setting differs from that
// of the campaign's first deployment, so that their results cannot be
// pooled.
type SettingError struct {
	// Folder is the track folder refused; Setting names the setting;
	// Value and FirstValue are its value there and in First, the first
	// deployment's folder.
	Folder, Setting, Value, First, FirstValue string
}

func (e *SettingError) Error() string {
	return fmt.Sprintf("track folder %s was analysed with %s %s but %s with %s, so the two cannot be pooled; run the tracking stage of one of them again with the other's setting",
		e.Folder, e.Setting, e.Value, e.First, e.FirstValue)
}

// ErrDuplicate marks a deployment given twice.
var ErrDuplicate = errors.New("deployment given twice")
