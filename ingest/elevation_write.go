package ingest

import (
	"fmt"
	"maps"
	"math"
	"slices"
	"strings"
	"time"

	"crestspeed/internal/netcdf"
)

// WriteOptions configure [CreateElevation]. The zero value writes the
// default names, deflate level 4, times in seconds since 1970-01-01, deep
// water, no foam.
type WriteOptions struct {
	// Names of dimensions and variables; empty fields take the defaults.
	Names Names
	// Deflate is the zlib level 1-9 for eta and foam; 0 means the default
	// (4) and a negative value stores them uncompressed.
	Deflate int
	// TimeUnits is the CF units of the times passed to WriteFrame; it must
	// be in seconds ("seconds since <instant>"). Default
	// "seconds since 1970-01-01T00:00:00Z".
	TimeUnits string
	// DepthM is the water depth in metres, 0 for deep water.
	DepthM float64
	// Title of the dataset; default "Sea-surface elevation maps".
	Title string
	// Attrs are extra global text attributes (provenance: institution,
	// source, comment, references, ...). A "history" entry is kept and the
	// writer's own line appended to it. Conventions, title and
	// water_depth_m are set by the writer and cannot be overridden here.
	Attrs map[string]string
	// WithFoam adds the foam(time, y, x) mask variable; WriteFrame then
	// needs a mask for every frame.
	WithFoam bool
}

// DefaultTimeUnits are the time units written when none are given.
const DefaultTimeUnits = "seconds since 1970-01-01T00:00:00Z"

// ElevationWriter writes an elevation-map file frame by frame. Create it
// with [CreateElevation]; end with Commit, or Abort to discard the output.
// It is not safe for concurrent use.
type ElevationWriter struct {
	path     string
	w        *netcdf.Writer
	names    Names
	ny, nx   int
	withFoam bool
	n        int     // frames written
	last     float64 // time of the last frame

	tbuf           [1]float64
	start1, count1 []int
	start3, count3 []int
}

// CreateElevation starts an elevation-map file at path on the given grid.
// Nothing appears at path until Commit.
func CreateElevation(path string, grid Grid, opt WriteOptions) (*ElevationWriter, error) {
	names := opt.Names.withDefaults()
	for _, ax := range []struct {
		name string
		v    []float64
	}{{names.Y, grid.Y}, {names.X, grid.X}} {
		if err := checkAxis(ax.v); err != nil {
			return nil, fmt.Errorf("ingest: cannot write %s: grid axis %q %v", path, ax.name, err)
		}
	}
	level := opt.Deflate
	switch {
	case level == 0:
		level = 4
	case level < 0:
		level = 0
	case level > 9:
		return nil, fmt.Errorf("ingest: cannot write %s: deflate level %d is above 9; use 1-9, 0 for the default or a negative value for none", path, opt.Deflate)
	}
	units := opt.TimeUnits
	if units == "" {
		units = DefaultTimeUnits
	}
	if f, _, err := parseTimeUnits(units); err != nil || f != 1 {
		return nil, fmt.Errorf("ingest: cannot write %s: time units %q are not seconds; use \"seconds since <instant>\"", path, units)
	}
	if math.IsNaN(opt.DepthM) || math.IsInf(opt.DepthM, 0) || opt.DepthM < 0 {
		return nil, fmt.Errorf("ingest: cannot write %s: water depth %g m is invalid; give a positive depth in metres or 0 for deep water", path, opt.DepthM)
	}
	title := opt.Title
	if title == "" {
		title = "Sea-surface elevation maps"
	}
	nw, err := netcdf.Create(path)
	if err != nil {
		return nil, fmt.Errorf("ingest: %w", err)
	}
	ew := &ElevationWriter{
		path: path, w: nw, names: names,
		ny: grid.Ny(), nx: grid.Nx(), withFoam: opt.WithFoam,
		start1: []int{0}, count1: []int{1},
		start3: []int{0, 0, 0}, count3: []int{1, grid.Ny(), grid.Nx()},
	}
	if err := ew.define(grid, level, units, title, opt); err != nil {
		nw.Abort()
		return nil, fmt.Errorf("ingest: cannot write %s: %w", path, err)
	}
	return ew, nil
}

// define writes the header and the coordinates.
func (ew *ElevationWriter) define(grid Grid, level int, units, title string, opt WriteOptions) error {
	w, n := ew.w, ew.names
	ds := []string{n.Time, n.Y, n.X}
	steps := []func() error{
		func() error { return w.DefDim(n.Time, 0) },
		func() error { return w.DefDim(n.Y, grid.Ny()) },
		func() error { return w.DefDim(n.X, grid.Nx()) },
		func() error { return w.DefVar(n.Time, netcdf.Float64, []string{n.Time}) },
		func() error { return w.SetChunks(n.Time, []int{1024}) },
		func() error { return w.PutAttText(n.Time, "standard_name", "time") },
		func() error { return w.PutAttText(n.Time, "long_name", "time of the elevation map") },
		func() error { return w.PutAttText(n.Time, "units", units) },
		func() error { return w.PutAttText(n.Time, "calendar", "standard") },
		func() error { return w.PutAttText(n.Time, "axis", "T") },
		func() error { return w.DefVar(n.Y, netcdf.Float64, []string{n.Y}) },
		func() error { return w.PutAttText(n.Y, "long_name", "y coordinate of the cell centre, horizontal") },
		func() error { return w.PutAttText(n.Y, "units", "m") },
		func() error { return w.PutAttText(n.Y, "axis", "Y") },
		func() error { return w.DefVar(n.X, netcdf.Float64, []string{n.X}) },
		func() error { return w.PutAttText(n.X, "long_name", "x coordinate of the cell centre, horizontal") },
		func() error { return w.PutAttText(n.X, "units", "m") },
		func() error { return w.PutAttText(n.X, "axis", "X") },
		func() error { return w.DefVar(n.Eta, netcdf.Float32, ds) },
		func() error { return w.SetChunks(n.Eta, []int{1, grid.Ny(), grid.Nx()}) },
		func() error { return w.SetDeflate(n.Eta, level, level > 0) },
		func() error { return w.SetFill(n.Eta, math.NaN()) },
		func() error {
			return w.PutAttText(n.Eta, "standard_name", "sea_surface_height_above_mean_sea_level")
		},
		func() error {
			return w.PutAttText(n.Eta, "long_name", "sea-surface elevation above the mean water level of the record, positive up")
		},
		func() error { return w.PutAttText(n.Eta, "units", "m") },
	}
	if ew.withFoam {
		steps = append(steps,
			func() error { return w.DefVar(n.Foam, netcdf.Uint8, ds) },
			func() error { return w.SetChunks(n.Foam, []int{1, grid.Ny(), grid.Nx()}) },
			func() error { return w.SetDeflate(n.Foam, level, false) },
			func() error { return w.PutAttText(n.Foam, "long_name", "whitecap foam mask") },
			func() error { return w.PutAtt(n.Foam, "flag_values", netcdf.Uint8, 0, 1) },
			func() error { return w.PutAttText(n.Foam, "flag_meanings", "water whitecap") },
		)
	}
	// Global attributes: Conventions and title, then the caller's (sorted,
	// for a reproducible header), then the depth.
	attrs := maps.Clone(opt.Attrs)
	if attrs == nil {
		attrs = map[string]string{}
	}
	if attrs["source"] == "" {
		attrs["source"] = "crestspeed"
	}
	hist := time.Now().UTC().Format(time.RFC3339) + " crestspeed: elevation maps written"
	if h := strings.TrimRight(attrs["history"], "\n"); h != "" {
		hist = h + "\n" + hist
	}
	attrs["history"] = hist
	reserved := map[string]bool{"Conventions": true, "title": true, "water_depth_m": true}
	steps = append(steps,
		func() error { return w.PutAttText("", "Conventions", "CF-1.8") },
		func() error { return w.PutAttText("", "title", title) },
	)
	for _, k := range slices.Sorted(maps.Keys(attrs)) {
		if reserved[k] {
			continue
		}
		v := attrs[k]
		steps = append(steps, func() error { return w.PutAttText("", k, v) })
	}
	steps = append(steps,
		func() error { return w.PutAttFloat64("", "water_depth_m", opt.DepthM) },
		func() error {
			return w.PutAttText("", "water_depth_comment", "water_depth_m is the still-water depth in metres; 0 or less means deep water")
		},
		w.EndDef,
		func() error { return w.PutFloat64(n.Y, grid.Y) },
		func() error { return w.PutFloat64(n.X, grid.X) },
	)
	for _, st := range steps {
		if err := st(); err != nil {
			return err
		}
	}
	return nil
}

// Path returns the final path of the file.
func (ew *ElevationWriter) Path() string { return ew.path }

// Frames returns the number of frames written so far.
func (ew *ElevationWriter) Frames() int { return ew.n }

// WriteFrame appends one frame: its time t in seconds (strictly after the
// previous frame), its elevations eta (row-major ny*nx, NaN where unknown)
// and, when the writer was created WithFoam, its foam mask (otherwise foam
// must be nil).
func (ew *ElevationWriter) WriteFrame(t float64, eta []float32, foam []uint8) error {
	if ew.w == nil {
		return fmt.Errorf("ingest: %s: writer already committed or aborted", ew.path)
	}
	if math.IsNaN(t) || math.IsInf(t, 0) {
		return fmt.Errorf("ingest: %s: frame %d has time %g; give a finite time in seconds", ew.path, ew.n, t)
	}
	if ew.n > 0 && !(t > ew.last) {
		return fmt.Errorf("ingest: %s: frame %d has time %g s, not after the previous frame (%g s); write frames in increasing time order", ew.path, ew.n, t, ew.last)
	}
	if n := ew.ny * ew.nx; len(eta) != n {
		return fmt.Errorf("ingest: %s: frame %d has %d elevations; the %d x %d grid needs %d", ew.path, ew.n, len(eta), ew.ny, ew.nx, n)
	}
	switch {
	case ew.withFoam && len(foam) != len(eta):
		return fmt.Errorf("ingest: %s: frame %d has a foam mask of %d cells; the grid needs %d (the writer was created WithFoam)", ew.path, ew.n, len(foam), len(eta))
	case !ew.withFoam && foam != nil:
		return fmt.Errorf("ingest: %s: frame %d has a foam mask but the writer was created without WithFoam; set WithFoam or pass nil", ew.path, ew.n)
	}
	ew.start1[0], ew.start3[0] = ew.n, ew.n
	ew.tbuf[0] = t
	if err := ew.w.PutFloat64Slab(ew.names.Time, ew.start1, ew.count1, ew.tbuf[:]); err != nil {
		return fmt.Errorf("ingest: %w", err)
	}
	if err := ew.w.PutFloat32Slab(ew.names.Eta, ew.start3, ew.count3, eta); err != nil {
		return fmt.Errorf("ingest: %w", err)
	}
	if ew.withFoam {
		if err := ew.w.PutUint8Slab(ew.names.Foam, ew.start3, ew.count3, foam); err != nil {
			return fmt.Errorf("ingest: %w", err)
		}
	}
	ew.n++
	ew.last = t
	return nil
}

// Commit finishes the file and moves it to its final path. At least one
// frame must have been written.
func (ew *ElevationWriter) Commit() error {
	if ew.w == nil {
		return fmt.Errorf("ingest: %s: writer already committed or aborted", ew.path)
	}
	if ew.n == 0 {
		ew.Abort()
		return fmt.Errorf("ingest: %s: no frames were written; nothing to commit", ew.path)
	}
	w := ew.w
	ew.w = nil
	if err := w.Commit(); err != nil {
		return fmt.Errorf("ingest: %w", err)
	}
	return nil
}

// Abort discards the output. It does nothing after Commit, so it can be
// deferred.
func (ew *ElevationWriter) Abort() {
	if ew.w != nil {
		ew.w.Abort()
		ew.w = nil
	}
}
