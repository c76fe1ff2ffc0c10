package report

import (
	"fmt"
	"math"
	"strings"
	"time"

	"crestspeed/internal/netcdf"
)

// TrajectoryInfo is the metadata written into crest_tracks.nc.
type TrajectoryInfo struct {
	// TimeUnits are the CF units of the time column ("seconds since
	// 2026-06-14T09:00:00Z"); "" or units without a reference time make
	// time a plain duration in seconds.
	TimeUnits string
	// Title, Source (tool and version) and Site go into global attributes.
	Title, Source, Site string
	// Created is written into the history attribute.
	Created time.Time
}

// WriteTrajectories writes the crest table as CF-1.8 discrete sampling
// geometry trajectories (CF Conventions 1.8, ch. 9 and appendix H.4.3): a
// contiguous ragged array with one trajectory per crest track. Dimension
// "trajectory" counts tracks, "obs" crest rows; trajectory_id
// (cf_role = "trajectory_id") and row_size (sample_dimension = "obs") are
// indexed by trajectory; time, x and y are the coordinates of every
// observation and the other columns of crests.csv data variables with
// units and long names. Values are stored as doubles, exactly as in
// crests.csv, unknown values as NaN (_FillValue NaN). The file appears at
// path complete or not at all.
func WriteTrajectories(path string, t *CrestTable, info TrajectoryInfo) (err error) {
	runs := t.TrackRuns()
	nTraj, nObs := len(runs)-1, t.Len()
	if nObs == 0 {
		return fmt.Errorf("%s: there are no crest rows to write", path)
	}
	w, err := netcdf.Create(path)
	if err != nil {
		return err
	}
	defer w.Abort()
	check := func(errs ...error) error {
		for _, e := range errs {
			if e != nil {
				return e
			}
		}
		return nil
	}
	if err := check(w.DefDim("trajectory", nTraj), w.DefDim("obs", nObs)); err != nil {
		return err
	}
	chunk := min(nObs, 1<<16)
	// trajectory variables
	if err := check(
		w.DefVar("trajectory_id", netcdf.Int32, []string{"trajectory"}),
		w.PutAttText("trajectory_id", "cf_role", "trajectory_id"),
		w.PutAttText("trajectory_id", "long_name", "crest track identifier (track_id of crests.csv)"),
		w.DefVar("row_size", netcdf.Int32, []string{"trajectory"}),
		w.PutAttText("row_size", "long_name", "number of crest observations of this track"),
		w.PutAttText("row_size", "sample_dimension", "obs"),
	); err != nil {
		return err
	}
	tu := strings.TrimSpace(info.TimeUnits)
	hasRef := strings.Contains(strings.ToLower(tu), " since ")
	coords := "time x y"
	for k := range CrestColumns {
		if k == ColTrackID {
			continue // the trajectory_id variable
		}
		m := crestMeta[k]
		typ := netcdf.Float64
		if m.integer {
			typ = netcdf.Int32
		}
		if err := check(
			w.DefVar(m.nc, typ, []string{"obs"}),
			w.SetChunks(m.nc, []int{chunk}),
			w.SetDeflate(m.nc, 1, true),
		); err != nil {
			return err
		}
		if !m.integer && !m.required && k != ColX && k != ColY { // coordinates are never missing
			if err := w.SetFill(m.nc, nan()); err != nil {
				return err
			}
		}
		units, long := m.units, m.long
		switch k {
		case ColTime:
			if hasRef {
				units = tu
			} else {
				units = "s"
				long = "time from the origin of the input record's time axis"
			}
		}
		if err := check(w.PutAttText(m.nc, "units", units), w.PutAttText(m.nc, "long_name", long),
			w.PutAttText(m.nc, "source_column", CrestColumns[k]+" of crests.csv")); err != nil {
			return err
		}
		if m.std != "" && (k != ColTime || hasRef) {
			if err := w.PutAttText(m.nc, "standard_name", m.std); err != nil {
				return err
			}
		}
		switch k {
		case ColTime:
			err = w.PutAttText(m.nc, "axis", "T")
		case ColX:
			err = w.PutAttText(m.nc, "axis", "X")
		case ColY:
			err = w.PutAttText(m.nc, "axis", "Y")
		default:
			err = w.PutAttText(m.nc, "coordinates", coords)
		}
		if err != nil {
			return err
		}
	}
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
			"x and y are positions on the analysis grid of the input record; along and across are measured along and across the mean direction of wave travel. " + Caution},
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
	if err := w.EndDef(); err != nil {
		return err
	}
	ids := make([]float64, nTraj)
	sizes := make([]float64, nTraj)
	for k := 0; k < nTraj; k++ {
		ids[k] = t.Cols[ColTrackID][runs[k]]
		sizes[k] = float64(runs[k+1] - runs[k])
	}
	if err := check(w.PutFloat64("trajectory_id", ids), w.PutFloat64("row_size", sizes)); err != nil {
		return err
	}
	for k := range CrestColumns {
		if k == ColTrackID {
			continue
		}
		if err := w.PutFloat64(crestMeta[k].nc, t.Cols[k]); err != nil {
			return err
		}
	}
	return w.Commit()
}

func nan() float64 { return math.NaN() }
