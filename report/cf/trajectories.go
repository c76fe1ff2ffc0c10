// Package cf writes the crest table as CF-1.8 discrete-sampling-geometry
// trajectories in NetCDF (crest_tracks.nc).
package cf

import (
	"fmt"
	"math"
	"strings"
	"time"

	"crestspeed/internal/netcdf"
	"crestspeed/report/summary"
	"crestspeed/report/table"
)

// TrajectoryInfo is the metadata written into crest_tracks.nc.
type TrajectoryInfo struct {
	// TimeUnits are the CF units of the time column ("seconds since
	// 2026-06-14T09:00:00Z"); "" or units without a reference time make
	// time a plain duration in seconds.
	TimeUnits string
	// Title, Source (tool and version) and Site go into global attributes.
	Title, Source, Site string
	// Created is written into the history attribute (now when zero).
	Created time.Time
}

// WriteTrajectories writes a crest table (table.Crests, rows of a track
// together) as CF-1.8 discrete sampling geometry trajectories (CF
// Conventions 1.8, ch. 9 and appendix H.4.3): a contiguous ragged array
// with one trajectory per crest track. Dimension "trajectory" counts
// tracks, "obs" crest rows; trajectory_id (cf_role = "trajectory_id") and
// row_size (sample_dimension = "obs") are indexed by trajectory; time, x
// and y are the coordinates of every observation and the other columns of
// crests.csv data variables with the units and long names of its schema.
// Values are stored as doubles, the same numbers as crests.csv, unknown
// values as NaN (_FillValue NaN). The file appears at path complete or not
// at all.
func WriteTrajectories(path string, t *table.Table, info TrajectoryInfo) error {
	runs := table.TrackRuns(t)
	nTraj, nObs := len(runs)-1, t.Len()
	if nObs == 0 {
		return fmt.Errorf("%s: there are no crest rows to write", path)
	}
	w, err := netcdf.Create(path)
	if err != nil {
		return err
	}
	defer w.Abort()
	if err := defineTrajectories(w, nTraj, nObs); err != nil {
		return err
	}
	tu := strings.TrimSpace(info.TimeUnits)
	for k := range t.Schema.Columns {
		if k != table.CrestTrack { // the trajectory_id variable
			if err := defineColumn(w, &t.Schema.Columns[k], k, tu, min(nObs, 1<<16)); err != nil {
				return err
			}
		}
	}
	if err := putGlobals(w, info); err != nil {
		return err
	}
	if err := w.EndDef(); err != nil {
		return err
	}
	ids := make([]float64, nTraj)
	sizes := make([]float64, nTraj)
	for k := 0; k < nTraj; k++ {
		ids[k] = t.Cols[table.CrestTrack][runs[k]]
		sizes[k] = float64(runs[k+1] - runs[k])
	}
	if err := first(w.PutFloat64("trajectory_id", ids), w.PutFloat64("row_size", sizes)); err != nil {
		return err
	}
	for k, c := range t.Schema.Columns {
		if k != table.CrestTrack {
			if err := w.PutFloat64(c.NC, t.Cols[k]); err != nil {
				return err
			}
		}
	}
	return w.Commit()
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

// defineTrajectories defines the dimensions and the variables indexed by
// trajectory.
func defineTrajectories(w *netcdf.Writer, nTraj, nObs int) error {
	return first(
		w.DefDim("trajectory", nTraj), w.DefDim("obs", nObs),
		w.DefVar("trajectory_id", netcdf.Int32, []string{"trajectory"}),
		w.PutAttText("trajectory_id", "cf_role", "trajectory_id"),
		w.PutAttText("trajectory_id", "long_name", "crest track identifier (track_id of crests.csv)"),
		w.DefVar("row_size", netcdf.Int32, []string{"trajectory"}),
		w.PutAttText("row_size", "long_name", "number of crest observations of this track"),
		w.PutAttText("row_size", "sample_dimension", "obs"),
	)
}

// defineColumn defines the variable of crest column c (position k) along
// obs, with its attributes; tu are the CF time units of the record.
func defineColumn(w *netcdf.Writer, c *table.Column, k int, tu string, chunk int) error {
	integer := c.Kind != table.Number
	typ := netcdf.Float64
	if integer {
		typ = netcdf.Int32
	}
	if err := first(w.DefVar(c.NC, typ, []string{"obs"}), w.SetChunks(c.NC, []int{chunk}), w.SetDeflate(c.NC, 1, true)); err != nil {
		return err
	}
	coordinate := map[int]string{table.CrestTime: "T", table.CrestX: "X", table.CrestY: "Y"}[k]
	if !integer && !c.Required && coordinate == "" { // coordinates are never missing
		if err := w.SetFill(c.NC, math.NaN()); err != nil {
			return err
		}
	}
	hasRef := strings.Contains(strings.ToLower(tu), " since ")
	units, long, std := c.Units, c.Long, c.Standard
	if k == table.CrestTime {
		if hasRef {
			units = tu
		} else {
			units, long, std = "s", "time from the origin of the input record's time axis", ""
		}
	}
	if err := first(w.PutAttText(c.NC, "units", units), w.PutAttText(c.NC, "long_name", long),
		w.PutAttText(c.NC, "source_column", c.Name+" of crests.csv")); err != nil {
		return err
	}
	if std != "" {
		if err := w.PutAttText(c.NC, "standard_name", std); err != nil {
			return err
		}
	}
	if coordinate != "" {
		return w.PutAttText(c.NC, "axis", coordinate)
	}
	return w.PutAttText(c.NC, "coordinates", "time x y")
}

// putGlobals writes the global attributes.
func putGlobals(w *netcdf.Writer, info TrajectoryInfo) error {
	created := info.Created
	if created.IsZero() {
		created = time.Now()
	}
	title := "crestspeed crest tracks"
	if info.Title != "" {
		title += ": " + info.Title
	}
	globals := [][2]string{
		{"Conventions", "CF-1.8"},
		{"featureType", "trajectory"},
		{"title", title},
		{"source", info.Source},
		{"history", created.UTC().Format(time.RFC3339) + " written by " + info.Source},
		{"comment", "One trajectory per crest track, one observation per crest tip per frame; the same rows as crests.csv. " +
			"x and y are positions on the analysis grid of the input record; along and across are measured along and across the mean direction of wave travel. " + summary.Caution},
		{"references", "CF Conventions 1.8, chapter 9 (discrete sampling geometries), contiguous ragged array representation"},
	}
	if info.Site != "" {
		globals = append(globals, [2]string{"site", info.Site})
	}
	for _, g := range globals {
		if err := w.PutAttText("", g[0], g[1]); err != nil {
			return err
		}
	}
	return nil
}
