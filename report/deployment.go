package report

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"crestspeed/report/stats"
	"crestspeed/report/summary"
	"crestspeed/report/table"
)

// Deployment is everything a report is built from: the crest table, the
// summary of the tracking run, the record's spectrum and, when the record
// had a foam mask, the whitecap tables.
type Deployment struct {
	// Crests is crests.csv (table.Crests), rows of a track together.
	Crests  *table.Table
	Summary *Summary
	// Spectrum is spectrum.csv (table.Spectrum).
	Spectrum *table.Table
	// Whitecaps holds whitecaps.csv, lambda.csv and coverage.csv; nil when
	// the summary has no whitecaps block (no foam mask analysed).
	Whitecaps *WhitecapTables
	// GaugeSpectrum is gauge_spectrum.csv (table.GaugeSpectrum); nil
	// without a gauge comparison.
	GaugeSpectrum *table.Table
	// TracksDir is the folder the files came from.
	TracksDir string
}

// WhitecapTables are the whitecap files of a tracking run.
type WhitecapTables struct {
	Rows, Lambda, Coverage *table.Table
}

// FolderError is a track folder that is missing or empty, or lacks a
// file of the tracking stage.
type FolderError struct {
	Dir, Msg string
}

func (e *FolderError) Error() string { return e.Msg }

func folderError(dir, format string, a ...any) error {
	return &FolderError{Dir: dir, Msg: fmt.Sprintf(format, a...)}
}

// LoadDeployment reads crests.csv, summary.json and spectrum.csv from a
// folder the tracking stage wrote, and whitecaps.csv, lambda.csv and
// coverage.csv when summary.json has whitecap results. The tables must
// agree with the summary (as many crest rows, rows with a speed and
// tracks; as many whitecap rows, speed bins and analysed frames): a
// truncated file, or files of different runs, are refused with an
// *table.Error.
func LoadDeployment(dir string) (*Deployment, error) {
	fi, err := os.Stat(dir)
	switch {
	case err != nil:
		return nil, folderError(dir, "track folder %s cannot be read (%v); give the folder the tracking stage wrote", dir, err)
	case !fi.IsDir():
		return nil, folderError(dir, "%s is a file, not a track folder; give the folder the tracking stage wrote", dir)
	}
	if entries, err := os.ReadDir(dir); err != nil || len(entries) == 0 {
		return nil, folderError(dir, "track folder %s is empty or cannot be read; run the tracking stage into it first", dir)
	}
	for _, need := range []string{"crests.csv", "summary.json", "spectrum.csv"} {
		if _, err := os.Stat(filepath.Join(dir, need)); err != nil {
			return nil, folderError(dir, "track folder %s has no %s; run the tracking stage into it first", dir, need)
		}
	}
	sum, err := summary.Read(filepath.Join(dir, "summary.json"))
	if err != nil {
		return nil, err
	}
	d := &Deployment{Summary: sum, TracksDir: dir}
	if d.Crests, err = table.ReadFile(filepath.Join(dir, "crests.csv"), table.Crests); err != nil {
		return nil, err
	}
	if err := checkCrests(filepath.Join(dir, "crests.csv"), d.Crests, sum.Crests); err != nil {
		return nil, err
	}
	if d.Spectrum, err = table.ReadFile(filepath.Join(dir, "spectrum.csv"), table.Spectrum); err != nil {
		return nil, err
	}
	if sum.Whitecaps != nil {
		if d.Whitecaps, err = loadWhitecaps(dir, sum.Whitecaps); err != nil {
			return nil, err
		}
	}
	if sum.Gauge != nil {
		if d.GaugeSpectrum, err = table.ReadFile(filepath.Join(dir, "gauge_spectrum.csv"), table.GaugeSpectrum); err != nil {
			return nil, err
		}
	}
	return d, nil
}

// mismatch is the error of a table whose size disagrees with summary.json.
func mismatch(path string, have int, what string, want int) error {
	return &table.Error{File: path, Msg: fmt.Sprintf("holds %d %s but summary.json counts %d, so it is truncated or the files come from different runs", have, what, want)}
}

// checkCrests compares the crest table with the counts of the summary.
func checkCrests(path string, t *table.Table, c summary.CrestsSummary) error {
	speed := 0
	for _, v := range t.Cols[table.CrestSpeed] {
		if v == v { // not NaN
			speed++
		}
	}
	switch tracks := len(table.TrackRuns(t)) - 1; {
	case t.Len() != c.Rows:
		return mismatch(path, t.Len(), "crest rows", c.Rows)
	case speed != c.RowsWithSpeed:
		return mismatch(path, speed, "rows with a crest speed", c.RowsWithSpeed)
	case tracks != c.Tracks:
		return mismatch(path, tracks, "crest tracks", c.Tracks)
	}
	return nil
}

// loadWhitecaps reads the three whitecap files of a track folder whose
// summary has a whitecaps block, and checks that they belong to it.
func loadWhitecaps(dir string, ws *summary.WhitecapsSummary) (*WhitecapTables, error) {
	var w WhitecapTables
	for _, f := range []struct {
		name   string
		schema *table.Schema
		dst    **table.Table
		want   int
	}{
		{"whitecaps.csv", table.Whitecaps, &w.Rows, ws.Rows},
		{"lambda.csv", table.Lambda, &w.Lambda, len(ws.Lambda)},
		{"coverage.csv", table.Coverage, &w.Coverage, ws.FramesAnalysed},
	} {
		p := filepath.Join(dir, f.name)
		t, err := table.ReadFile(p, f.schema)
		if errors.Is(err, os.ErrNotExist) {
			return nil, folderError(dir, "track folder %s has no %s although its summary.json has whitecap results; %s", dir, f.name, table.Advice)
		}
		if err != nil {
			return nil, err
		}
		if t.Len() != f.want {
			return nil, mismatch(p, t.Len(), f.schema.Rows, f.want)
		}
		*f.dst = t
	}
	return &w, nil
}

// ratioStats describes the two ratios of a table (columns peak and
// local) by the steepness class in column by, units in column ids; the
// uncertainty u of c_p widens the intervals of the peak ratio.
func ratioStats(t *table.Table, peak, local, by, ids int, inner []float64, opt stats.Options, u float64) map[string]stats.Distributions {
	out := map[string]stats.Distributions{}
	for name, col := range map[string]int{"peak": peak, "local": local} {
		o := opt
		o.ScaleUncertainty = 0
		if name == "peak" {
			o.ScaleUncertainty = u
		}
		out[name] = stats.Describe(stats.Classify(t.Cols[col], t.Cols[by], t.Cols[ids], inner), o)
	}
	return out
}

func crestDistributions(t *table.Table, inner []float64, opt stats.Options, u float64) map[string]stats.Distributions {
	return ratioStats(t, table.CrestRatioPeak, table.CrestRatioLocal, table.CrestSteepness, table.CrestTrack, inner, opt, u)
}

func whitecapDistributions(t *table.Table, inner []float64, opt stats.Options, u float64) map[string]stats.Distributions {
	return ratioStats(t, table.WhitecapRatioPeak, table.WhitecapRatioLocal, table.WhitecapSteepness, table.WhitecapID, inner, opt, u)
}

// statsOnly keeps the statistics of distributions.
func statsOnly(d map[string]stats.Distributions) map[string]stats.RatioStats {
	out := map[string]stats.RatioStats{}
	for k, v := range d {
		out[k] = v.Stats()
	}
	return out
}

func crestRatioStats(t *table.Table, inner []float64, opt stats.Options, u float64) map[string]stats.RatioStats {
	return statsOnly(crestDistributions(t, inner, opt, u))
}

func whitecapRatioStats(t *table.Table, inner []float64, opt stats.Options, u float64) map[string]stats.RatioStats {
	return statsOnly(whitecapDistributions(t, inner, opt, u))
}
