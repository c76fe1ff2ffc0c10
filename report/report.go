// Package report turns an analysed record into what a scientist reads and
// publishes, and writes the files of a tracking run and of its report. It
// computes statistics, never physics: every speed and ratio comes from
// package speed.
//
// # Parts
//
// The work is split by job into sub-packages, which this package composes:
//
//   - report/table: the CSV tables (crests.csv, tracks.csv, spectrum.csv,
//     whitecaps.csv, lambda.csv, coverage.csv), each schema once, with
//     the precision of every column; reading refuses damaged files.
//   - report/stats: quantiles, kernel density estimates, histograms, and
//     class statistics with bootstrap intervals that resample whole tracks.
//   - report/summary: summary.json.
//   - report/figures and report/page: the figures and report.html.
//   - report/cf: the crest tracks as CF-1.8 trajectories (crest_tracks.nc).
//
// # Model
//
// A report is built from a Deployment: the crest table, the summary of
// the tracking run, the record's frequency spectrum and, when the record
// had a foam mask, the whitecap tables. The tracking stage hands it over
// in memory (WriteTrackOutputsForReport, whose crest table is read back
// from the crests.csv it has just written, so that the rows and the table
// are not held together; DeploymentFromRecord); a report rebuilt later
// reads it back from the files (LoadDeployment). All give the same
// numbers: the tables
// are rounded to the precision of their files before anything is
// computed from them, and the files keep that precision exactly.
//
// WriteReport writes report.html (self-contained), the figures as PNG and
// SVG, the crest tracks as CF-1.8 trajectories and summary.json with the
// statistics, their intervals and the path of every output; all files
// appear together or not at all.
package report

import (
	"fmt"
	"time"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
)

// Summary is summary.json (see package summary).
type Summary = summary.Summary

// FileInfo identifies an input or output file.
type FileInfo = summary.FileInfo

// BootstrapOptions configure the bootstrap intervals (see package stats).
type BootstrapOptions = stats.BootstrapOptions

// DescribeFile returns the absolute path, size and SHA-256 of a file.
func DescribeFile(path string) (FileInfo, error) { return summary.DescribeFile(path) }

// AllTrackOutputs are every file the tracking stage may write: TrackOutputs
// and, for a record with a foam mask, the whitecap tables.
func AllTrackOutputs() []string {
	return append(append([]string{}, TrackOutputs...), whitecapOutputs...)
}

// TrackOutputs are the files the tracking stage writes (with
// whitecaps.csv, lambda.csv and coverage.csv when the record had a foam
// mask). spectrum.csv holds the record's frequency spectrum, so that the
// report can be rebuilt from the files alone.
var TrackOutputs = []string{"crests.csv", "tracks.csv", "spectrum.csv", "summary.json"}

// whitecapOutputs are the files of the whitecap analysis, and of the
// comparison with a gauge.
var whitecapOutputs = []string{"whitecaps.csv", "lambda.csv", "coverage.csv", "gauge_spectrum.csv"}

// ReportOutputs are what WriteReport puts in its folder (besides
// summary.json): the page, the CF trajectories (whitecap_tracks.nc only
// when the record has whitecaps) and the figures folder.
var ReportOutputs = []string{"report.html", "crest_tracks.nc", "whitecap_tracks.nc", "figures"}

// Defaults and bounds of the options.
const (
	// DefaultHighestCrests is the number of tracks figure 4 follows.
	DefaultHighestCrests = 5
	// MaxHighestCrests bounds Options.HighestCrests (figure 4 stays legible).
	MaxHighestCrests = 10
	// DefaultMinClassTracks is the fewest tracks a class needs for its
	// statistics to be shown as more than an indication and its density as
	// a curve (a choice of this tool).
	DefaultMinClassTracks = 10
	// DefaultBootstrapSeed is the seed of the resampling by default.
	DefaultBootstrapSeed = 1
)

// Options configure WriteReport; they are the "report" section of the
// configuration.
type Options struct {
	// Bootstrap configures the confidence intervals: bootstrap_resamples
	// (default 1000; 0 means the default) and bootstrap_seed (default 1).
	Bootstrap BootstrapOptions `yaml:",inline"`
	// HighestCrests is the number of tracks in figure 4, 1 to 10; 0 means
	// DefaultHighestCrests (5).
	HighestCrests int `yaml:"highest_crests"`
	// MinClassTracks is the fewest tracks (whitecaps, for whitecap
	// classes) a steepness class needs: a class with fewer is marked ◦ in
	// every table as an indication only and drawn as points, not as a
	// density curve. 0 means DefaultMinClassTracks (10).
	MinClassTracks int `yaml:"min_class_tracks"`
	// SteepnessBounds are the inner steepness-class boundaries; nil means
	// those recorded in the summary of the tracking run.
	SteepnessBounds []float64 `yaml:"-"`
	// Version is the version of the tool writing the report.
	Version string `yaml:"-"`
	// Created is the time the report says it was made (the page's
	// "generated" line, the history of the trajectory files); zero means
	// now. Reproducible leaves the wall-clock timings out of summary.json
	// and the page, so that the same inputs give the same bytes (the steps
	// of a resumable run).
	Created      time.Time `yaml:"-"`
	Reproducible bool      `yaml:"-"`
}

// DefaultOptions are the options by default.
func DefaultOptions() Options {
	return Options{
		Bootstrap:      BootstrapOptions{Resamples: stats.DefaultResamples, Seed: DefaultBootstrapSeed},
		HighestCrests:  DefaultHighestCrests,
		MinClassTracks: DefaultMinClassTracks,
	}
}

// Validate reports the first unusable setting.
func (o Options) Validate() error {
	switch {
	case o.Bootstrap.Resamples < 0 || o.Bootstrap.Resamples > 100000:
		return fmt.Errorf("bootstrap resamples %d is outside 0–100000 (0 means %d)", o.Bootstrap.Resamples, stats.DefaultResamples)
	case o.Bootstrap.Resamples > 0 && o.Bootstrap.Resamples < 100:
		return fmt.Errorf("bootstrap resamples %d is too few for a 90 %% interval; use at least 100 (common practice: 1000)", o.Bootstrap.Resamples)
	case o.HighestCrests < 0 || o.HighestCrests > MaxHighestCrests:
		return fmt.Errorf("number of highest crests %d is outside 1–%d", o.HighestCrests, MaxHighestCrests)
	case o.MinClassTracks < 0 || o.MinClassTracks > 10000:
		return fmt.Errorf("minimum number of tracks per class %d is outside 1–10000 (0 means %d)", o.MinClassTracks, DefaultMinClassTracks)
	}
	for i, v := range o.SteepnessBounds {
		if !(v > 0 && v < 2) || (i > 0 && v <= o.SteepnessBounds[i-1]) {
			return fmt.Errorf("steepness class boundaries %v must increase within (0, 2)", o.SteepnessBounds)
		}
	}
	return nil
}

// withDefaults fills the settings left at zero.
func (o Options) withDefaults() Options {
	d := DefaultOptions()
	if o.Bootstrap.Resamples == 0 {
		o.Bootstrap.Resamples = d.Bootstrap.Resamples
	}
	if o.HighestCrests == 0 {
		o.HighestCrests = d.HighestCrests
	}
	if o.MinClassTracks == 0 {
		o.MinClassTracks = d.MinClassTracks
	}
	return o
}
