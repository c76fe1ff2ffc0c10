// Package cf writes the crest table as CF-1.8 discrete-sampling-geometry
// trajectories in NetCDF (crest_tracks.nc), and the crest or whitecap rows
// of several deployments pooled into one such file.
package cf

import (
	"fmt"
	"math"
	"sort"
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
	// Comment, when not empty, is added to the comment attribute (a
	// pooled file lists its deployments there).
	Comment string
	// TimeLong, when not empty, is the long name of a time without a
	// reference time (the parts of a pooled file that keep their own
	// origins).
	TimeLong string
}

// Collection is the kind of rows a trajectory file holds: their schema
// and the columns that name the trajectory and place each observation.
type Collection struct {
	Schema         *table.Schema
	ID, Time, X, Y int
	// Noun names one trajectory in attributes ("crest track").
	Noun string
}

// The collections of the track folder.
var (
	// Crests are the rows of crests.csv, one trajectory per crest track.
	Crests = Collection{Schema: table.Crests, ID: table.CrestTrack, Time: table.CrestTime, X: table.CrestX, Y: table.CrestY, Noun: "crest track"}
	// Whitecaps are the rows of whitecaps.csv, one trajectory per whitecap.
	Whitecaps = Collection{Schema: table.Whitecaps, ID: table.WhitecapID, Time: table.WhitecapTime, X: table.WhitecapX, Y: table.WhitecapY, Noun: "whitecap"}
)

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
	return WriteCollection(path, Crests, t, info)
}

// WriteCollection writes the rows of one deployment's table of collection
// c (Crests or Whitecaps; the rows of a trajectory together and in time
// order, see ByTrajectory) as WriteTrajectories writes crest tracks.
func WriteCollection(path string, c Collection, t *table.Table, info TrajectoryInfo) error {
	return write(path, c, []Part{{Rows: t}}, info, false)
}

// ByTrajectory returns t with the rows of a trajectory together in time
// order (stable), as the contiguous ragged array needs; t itself when they
// already are.
func ByTrajectory(t *table.Table, c Collection) *table.Table {
	ids, ts := t.Cols[c.ID], t.Cols[c.Time]
	less := func(i, j int) bool {
		if ids[i] != ids[j] {
			return ids[i] < ids[j]
		}
		return ts[i] < ts[j]
	}
	sorted := true
	seen := map[float64]bool{}
	for i := range ids {
		if i > 0 && ids[i] != ids[i-1] && seen[ids[i]] || i > 0 && ids[i] == ids[i-1] && ts[i] < ts[i-1] {
			sorted = false
			break
		}
		seen[ids[i]] = true
	}
	if sorted {
		return t
	}
	out := &table.Table{Schema: t.Schema, Cols: make([][]float64, len(t.Cols))}
	for k := range t.Cols {
		out.Cols[k] = append([]float64(nil), t.Cols[k]...)
	}
	perm := make([]int, len(ids))
	for k := range perm {
		perm[k] = k
	}
	sort.SliceStable(perm, func(a, b int) bool { return less(perm[a], perm[b]) })
	out.Permute(perm)
	return out
}

// Part is the rows of one deployment in a pooled trajectory file.
type Part struct {
	// Rows is a table of the collection's schema, the rows of a
	// trajectory together and in time order.
	Rows *table.Table
	// TimeOffset is added to the time column: the seconds from the pooled
	// file's time origin to that of the part's.
	TimeOffset float64
}

// WritePooledTrajectories writes the rows of several deployments (parts,
// deployment d+1 being parts[d]) into one CF-1.8 trajectory file, laid out
// as WriteTrajectories lays out one: trajectories are numbered 1, 2, …
// across the parts (trajectory_id), the variable "deployment" gives each
// trajectory's deployment (from 1, the row of deployments.csv) and
// "source_id" its identifier in the deployment's own file, and the time
// of every observation is the part's time plus its TimeOffset, in
// info.TimeUnits. The file appears at path complete or not at all.
func WritePooledTrajectories(path string, c Collection, parts []Part, info TrajectoryInfo) error {
	return write(path, c, parts, info, true)
}

// write writes the trajectories of the parts; pooled numbers them anew
// and adds the deployment and source_id variables.
func write(path string, c Collection, parts []Part, info TrajectoryInfo, pooled bool) error {
	var ids, sizes, deployment []float64
	nObs := 0
	for d, p := range parts {
		if p.Rows.Schema != c.Schema {
			return fmt.Errorf("%s: part %d holds %s, not %s", path, d+1, p.Rows.Schema.File, c.Schema.File)
		}
		runs := trajectoryRuns(p.Rows.Cols[c.ID])
		for k := 0; k+1 < len(runs); k++ {
			ids = append(ids, p.Rows.Cols[c.ID][runs[k]])
			sizes = append(sizes, float64(runs[k+1]-runs[k]))
			deployment = append(deployment, float64(d+1))
		}
		nObs += p.Rows.Len()
	}
	nTraj := len(ids)
	if nObs == 0 {
		return fmt.Errorf("%s: there are no %s rows to write", path, c.Noun)
	}
	w, err := netcdf.Create(path)
	if err != nil {
		return err
	}
	defer w.Abort()
	if err := defineTrajectories(w, nTraj, nObs, c, pooled); err != nil {
		return err
	}
	tu := strings.TrimSpace(info.TimeUnits)
	for k := range c.Schema.Columns {
		if k != c.ID && c.Schema.Columns[k].Kind != table.Text { // the trajectory_id variable
			if err := defineColumn(w, c, k, tu, info.TimeLong, min(nObs, 1<<16)); err != nil {
				return err
			}
		}
	}
	if err := putGlobals(w, info, c); err != nil {
		return err
	}
	if err := w.EndDef(); err != nil {
		return err
	}
	if pooled {
		source := ids
		ids = make([]float64, nTraj)
		for k := range ids {
			ids[k] = float64(k + 1)
		}
		if err := first(w.PutFloat64("deployment", deployment), w.PutFloat64("source_id", source)); err != nil {
			return err
		}
	}
	if err := first(w.PutFloat64("trajectory_id", ids), w.PutFloat64("row_size", sizes)); err != nil {
		return err
	}
	var buf []float64
	for k, col := range c.Schema.Columns {
		if k == c.ID || col.Kind == table.Text {
			continue
		}
		data := parts[0].Rows.Cols[k]
		if len(parts) > 1 || (k == c.Time && parts[0].TimeOffset != 0) {
			buf = buf[:0]
			for _, p := range parts {
				off := 0.0
				if k == c.Time {
					off = p.TimeOffset
				}
				for _, v := range p.Rows.Cols[k] {
					buf = append(buf, v+off)
				}
			}
			data = buf
		}
		if err := w.PutFloat64(col.NC, data); err != nil {
			return err
		}
	}
	return w.Commit()
}

// trajectoryRuns returns the index of the first row of each run of equal
// identifiers, then len(ids).
func trajectoryRuns(ids []float64) []int {
	var runs []int
	for i := range ids {
		if i == 0 || ids[i] != ids[i-1] {
			runs = append(runs, i)
		}
	}
	return append(runs, len(ids))
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
func defineTrajectories(w *netcdf.Writer, nTraj, nObs int, c Collection, pooled bool) error {
	idLong := fmt.Sprintf("%s identifier (%s of %s)", c.Noun, c.Schema.Columns[c.ID].Name, c.Schema.File)
	if pooled {
		idLong = c.Noun + " number in this file, 1, 2, ... across the deployments"
	}
	steps := []error{
		w.DefDim("trajectory", nTraj), w.DefDim("obs", nObs),
		w.DefVar("trajectory_id", netcdf.Int32, []string{"trajectory"}),
		w.PutAttText("trajectory_id", "cf_role", "trajectory_id"),
		w.PutAttText("trajectory_id", "long_name", idLong),
		w.DefVar("row_size", netcdf.Int32, []string{"trajectory"}),
		w.PutAttText("row_size", "long_name", "number of observations of this "+c.Noun),
		w.PutAttText("row_size", "sample_dimension", "obs"),
	}
	if pooled {
		steps = append(steps,
			w.DefVar("deployment", netcdf.Int32, []string{"trajectory"}),
			w.PutAttText("deployment", "long_name", "deployment of this "+c.Noun+": its row of deployments.csv, from 1"),
			w.DefVar("source_id", netcdf.Int32, []string{"trajectory"}),
			w.PutAttText("source_id", "long_name", fmt.Sprintf("%s of this %s in the %s of its deployment", c.Schema.Columns[c.ID].Name, c.Noun, c.Schema.File)),
		)
	}
	return first(steps...)
}

// defineColumn defines the variable of column k of the collection along
// obs, with its attributes; tu are the CF time units of the record and
// timeLong, when not empty, the long name of a time without reference.
func defineColumn(w *netcdf.Writer, c Collection, k int, tu, timeLong string, chunk int) error {
	col := &c.Schema.Columns[k]
	integer := col.Kind != table.Number
	typ := netcdf.Float64
	if integer {
		typ = netcdf.Int32
	}
	if err := first(w.DefVar(col.NC, typ, []string{"obs"}), w.SetChunks(col.NC, []int{chunk}), w.SetDeflate(col.NC, 1, true)); err != nil {
		return err
	}
	coordinate := map[int]string{c.Time: "T", c.X: "X", c.Y: "Y"}[k]
	if !integer && !col.Required && coordinate == "" { // coordinates are never missing
		if err := w.SetFill(col.NC, math.NaN()); err != nil {
			return err
		}
	}
	hasRef := strings.Contains(strings.ToLower(tu), " since ")
	units, long, std := col.Units, col.Long, col.Standard
	if k == c.Time {
		if hasRef {
			units = tu
		} else {
			units, long, std = "s", "time from the origin of the input record's time axis", ""
			if timeLong != "" {
				long = timeLong
			}
		}
	}
	if err := first(w.PutAttText(col.NC, "units", units), w.PutAttText(col.NC, "long_name", long),
		w.PutAttText(col.NC, "source_column", col.Name+" of "+c.Schema.File)); err != nil {
		return err
	}
	if std != "" {
		if err := w.PutAttText(col.NC, "standard_name", std); err != nil {
			return err
		}
	}
	if col.Kind == table.Level {
		// CF §3.5 flags: the level's index and its name
		vals := make([]float64, len(col.Levels))
		for i := range vals {
			vals[i] = float64(i)
		}
		if err := first(w.PutAtt(col.NC, "flag_values", netcdf.Int32, vals...),
			w.PutAttText(col.NC, "flag_meanings", strings.Join(col.Levels, " "))); err != nil {
			return err
		}
	}
	if coordinate != "" {
		return w.PutAttText(col.NC, "axis", coordinate)
	}
	return w.PutAttText(col.NC, "coordinates", "time x y")
}

// putGlobals writes the global attributes.
func putGlobals(w *netcdf.Writer, info TrajectoryInfo, c Collection) error {
	created := info.Created
	if created.IsZero() {
		created = time.Now()
	}
	title := "crestspeed " + c.Noun + "s"
	if c.Noun == "crest track" {
		title = "crestspeed crest tracks"
	}
	if info.Title != "" {
		title += ": " + info.Title
	}
	comment := "One trajectory per crest track, one observation per crest tip per frame; the same rows as crests.csv. "
	if c.Schema != table.Crests {
		comment = fmt.Sprintf("One trajectory per %s, one observation per %s per frame; the same rows as %s. ", c.Noun, c.Noun, c.Schema.File)
	}
	if info.Comment != "" {
		comment += info.Comment + " "
	}
	globals := [][2]string{
		{"Conventions", "CF-1.8"},
		{"featureType", "trajectory"},
		{"title", title},
		{"source", info.Source},
		{"history", created.UTC().Format(time.RFC3339) + " written by " + info.Source},
		{"comment", comment +
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
