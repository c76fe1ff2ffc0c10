package ingest

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"maps"
	"math"
	"slices"
	"strings"

	"crestspeed/internal/netcdf"
)

// Grid is a regular horizontal grid given by its cell centres, in metres,
// strictly increasing along each axis with constant spacing.
type Grid struct {
	X, Y []float64
}

// Nx returns the number of cells along x.
func (g Grid) Nx() int { return len(g.X) }

// Ny returns the number of cells along y.
func (g Grid) Ny() int { return len(g.Y) }

// Dx returns the mean cell spacing along x, (x[n-1]-x[0])/(n-1); 0 for fewer
// than two cells.
func (g Grid) Dx() float64 { return spacing(g.X) }

// Dy returns the mean cell spacing along y; see [Grid.Dx].
func (g Grid) Dy() float64 { return spacing(g.Y) }

func spacing(v []float64) float64 {
	if len(v) < 2 {
		return 0
	}
	return (v[len(v)-1] - v[0]) / float64(len(v)-1)
}

// spacingTol is the relative tolerance on the cell spacing of a regular axis.
const spacingTol = 1e-3

// checkAxis reports why v is not a regular, strictly increasing axis of at
// least two cells, or nil. The message is the tail of a sentence that starts
// with the axis name.
func checkAxis(v []float64) error {
	if len(v) < 2 {
		return fmt.Errorf("has %d cells; at least 2 are needed", len(v))
	}
	for i, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return fmt.Errorf("has a non-finite value at index %d", i)
		}
	}
	d := spacing(v)
	for i := 1; i < len(v); i++ {
		if !(v[i] > v[i-1]) {
			return fmt.Errorf("is not strictly increasing at index %d (%g after %g); store the axis in increasing order and flip the data with it", i, v[i], v[i-1])
		}
	}
	for i := 1; i < len(v); i++ {
		if step := v[i] - v[i-1]; math.Abs(step-d) > spacingTol*d {
			return fmt.Errorf("is not regularly spaced: step %g between index %d and %d differs from the mean spacing %g by more than %g of it; regrid onto a regular axis", step, i-1, i, d, spacingTol)
		}
	}
	return nil
}

// Names are the NetCDF names of the dimensions and variables of an
// elevation-map file. Time, Y and X name both a dimension and its coordinate
// variable.
type Names struct {
	Time, Y, X, Eta, Foam string
}

// DefaultNames returns the names of the elevation-map contract: "time", "y",
// "x", "eta", "foam".
func DefaultNames() Names {
	return Names{Time: "time", Y: "y", X: "x", Eta: "eta", Foam: "foam"}
}

// withDefaults fills empty names with the defaults.
func (n Names) withDefaults() Names {
	d := DefaultNames()
	if n.Time == "" {
		n.Time = d.Time
	}
	if n.Y == "" {
		n.Y = d.Y
	}
	if n.X == "" {
		n.X = d.X
	}
	if n.Eta == "" {
		n.Eta = d.Eta
	}
	if n.Foam == "" {
		n.Foam = d.Foam
	}
	return n
}

// Names of the settings in messages (the yaml keys of [ElevationOptions]).
const (
	settingVariable = "variable"
)

// ElevationOptions configure [OpenElevation] and the multi-file sources.
// The zero value takes every default ([DefaultElevationOptions]); a zero
// number means its default.
type ElevationOptions struct {
	// Variable is the name of the elevation variable. Default "": the
	// variable whose CF standard_name is one of [ElevationStandardNames],
	// else "eta".
	Variable string `yaml:"variable"`
	// FoamVariable is the name of the optional whitecap mask. Default
	// "foam".
	FoamVariable string `yaml:"foam_variable"`
	// TimeDimension, YDimension and XDimension name the elevation
	// variable's dimensions, in any order in the file. Default "": found
	// from their coordinate variables (CF axis T/Y/X, standard_name time,
	// projection_y_coordinate, projection_x_coordinate, or time units
	// "... since ...") or their names time, y, x.
	TimeDimension string `yaml:"time_dimension"`
	YDimension    string `yaml:"y_dimension"`
	XDimension    string `yaml:"x_dimension"`
	// GapFactor: a time step longer than GapFactor times the median step is
	// a dropped-frame gap. Default 1.5; otherwise it must be greater than 1.
	GapFactor float64 `yaml:"gap_factor"`
	// MaxAbsElevationM: cells whose elevation is farther than this from 0,
	// in metres, are implausible, masked and counted. Default 30 m; a
	// negative value turns the bound off.
	MaxAbsElevationM float64 `yaml:"max_abs_elevation_m"`
	// SpikeFactor k: cells farther than k times the robust standard
	// deviation (1.4826 times the median absolute deviation) from the
	// frame's median elevation, and farther than SpikeMinM, are spikes,
	// masked and counted. Default 10; a negative value turns the test off.
	SpikeFactor float64 `yaml:"spike_factor"`
	// SpikeMinM is the smallest departure from the frame median, in metres,
	// that can be a spike, so that a flat frame crossed by one wave group
	// keeps its crests. Default 1 m.
	SpikeMinM float64 `yaml:"spike_min_m"`
	// MaxUnreadableFraction: frames that cannot be read (a damaged chunk)
	// are skipped and counted; when more than this fraction of the record's
	// frames (rounded up) is unreadable the record is refused. Default 0.05.
	MaxUnreadableFraction float64 `yaml:"max_unreadable_fraction"`
	// ReadBlockLimitMB bounds the memory of read-ahead, in megabytes: frames
	// are read a chunk row in time at a time (all frames of one chunk along
	// time), two rows in memory. When two rows exceed the limit, frames are
	// read one at a time, slowly, with a warning. Default 1024 MB.
	ReadBlockLimitMB float64 `yaml:"read_block_limit_mb"`
}

// Defaults of [ElevationOptions] (see there).
const (
	// DefaultGapFactor is common practice: half an interval of slack
	// catches a single dropped frame while tolerating timestamp jitter.
	DefaultGapFactor = 1.5
	// DefaultMaxAbsElevationM is common practice: the highest crests ever
	// recorded at sea stand about 20 m above the mean level (from memory:
	// the Draupner wave of 1995, 18.5 m), so larger values are faults.
	DefaultMaxAbsElevationM = 30.0
	// DefaultSpikeFactor is common practice for outlier tests on robust
	// statistics: 10 robust standard deviations is about twice the largest
	// crest-to-sigma ratio of field records (from memory: about 6 for the
	// Draupner wave), so only faults are cut.
	DefaultSpikeFactor = 10.0
	// DefaultSpikeMinM is common practice (see SpikeMinM).
	DefaultSpikeMinM = 1.0
	// DefaultMaxUnreadableFraction is common practice: a few damaged
	// frames are skipped, a damaged file is refused.
	DefaultMaxUnreadableFraction = 0.05
	// DefaultReadBlockLimitMB keeps read-ahead well inside the memory of
	// a batch node (common practice).
	DefaultReadBlockLimitMB = 1024.0
)

// DefaultElevationOptions returns the defaults of every setting.
func DefaultElevationOptions() ElevationOptions {
	return ElevationOptions{
		FoamVariable:          DefaultNames().Foam,
		GapFactor:             DefaultGapFactor,
		MaxAbsElevationM:      DefaultMaxAbsElevationM,
		SpikeFactor:           DefaultSpikeFactor,
		SpikeMinM:             DefaultSpikeMinM,
		MaxUnreadableFraction: DefaultMaxUnreadableFraction,
		ReadBlockLimitMB:      DefaultReadBlockLimitMB,
	}
}

// withDefaults fills zero settings with their defaults and checks the rest.
func (o ElevationOptions) withDefaults() (ElevationOptions, error) {
	d := DefaultElevationOptions()
	if o.FoamVariable == "" {
		o.FoamVariable = d.FoamVariable
	}
	fill := func(v *float64, def float64) {
		if *v == 0 {
			*v = def
		}
	}
	fill(&o.GapFactor, d.GapFactor)
	fill(&o.MaxAbsElevationM, d.MaxAbsElevationM)
	fill(&o.SpikeFactor, d.SpikeFactor)
	fill(&o.SpikeMinM, d.SpikeMinM)
	fill(&o.MaxUnreadableFraction, d.MaxUnreadableFraction)
	fill(&o.ReadBlockLimitMB, d.ReadBlockLimitMB)
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	switch {
	case bad(o.GapFactor) || !(o.GapFactor > 1):
		return o, fmt.Errorf("ingest: gap factor %g is invalid; it must be a finite number greater than 1 (default %g)", o.GapFactor, DefaultGapFactor)
	case bad(o.MaxAbsElevationM):
		return o, fmt.Errorf("ingest: max_abs_elevation_m %g is invalid; give a bound in metres (default %g) or a negative value for none", o.MaxAbsElevationM, DefaultMaxAbsElevationM)
	case bad(o.SpikeFactor):
		return o, fmt.Errorf("ingest: spike_factor %g is invalid; give a number of robust deviations (default %g) or a negative value for no spike test", o.SpikeFactor, DefaultSpikeFactor)
	case bad(o.SpikeMinM) || o.SpikeMinM < 0:
		return o, fmt.Errorf("ingest: spike_min_m %g is invalid; give a non-negative height in metres (default %g)", o.SpikeMinM, DefaultSpikeMinM)
	case bad(o.MaxUnreadableFraction) || o.MaxUnreadableFraction < 0 || o.MaxUnreadableFraction > 1:
		return o, fmt.Errorf("ingest: max_unreadable_fraction %g is invalid; give a fraction between 0 and 1 (default %g)", o.MaxUnreadableFraction, DefaultMaxUnreadableFraction)
	case bad(o.ReadBlockLimitMB) || o.ReadBlockLimitMB < 0:
		return o, fmt.Errorf("ingest: read_block_limit_mb %g is invalid; give a size in megabytes (default %g)", o.ReadBlockLimitMB, DefaultReadBlockLimitMB)
	}
	return o, nil
}

// ElevationMeta describes an elevation-map record.
type ElevationMeta struct {
	Grid Grid
	// Times of all frames in the file, in seconds (converted from minutes,
	// hours, days or milliseconds when the file stores those).
	Times []float64
	// TimeUnits is the CF units string of Times ("seconds since ..."); ""
	// when the file gave none (Times are then taken as seconds).
	TimeUnits string
	// DepthM is the water depth in metres from the water_depth_m global
	// attribute; 0 means deep water.
	DepthM float64
	// HasFoam is true when the file has a foam variable.
	HasFoam bool
	// Title is the global title attribute, if any.
	Title string
	// Attrs holds the other global text attributes, for provenance.
	Attrs map[string]string
	// Georef is the bearing of the grid (and the position of its origin)
	// from the grid_heading_deg and grid_origin_*_deg global attributes;
	// nil when the file has no heading.
	Georef *Georef
}

// Frame is one elevation map. Next fills it, reusing its slices when they
// are large enough.
type Frame struct {
	Index int       // index of the frame on the record's time axis
	Time  float64   // seconds, as in ElevationMeta.Times
	Eta   []float32 // metres, row-major ny*nx: Eta[iy*nx+ix]; NaN where unknown
	Valid []bool    // Valid[i] == !NaN(Eta[i])
	Foam  []uint8   // non-zero where whitecap; nil when the file has no foam
}

// Gap is a dropped-frame gap on the time axis: the step from frame
// AfterIndex (at Start) to the next frame (at End) is longer than GapFactor
// times the median step, and Missing frames are estimated to be absent.
type Gap struct {
	AfterIndex int
	Start, End float64
	Missing    int
}

// SkipCounts counts frames not delivered, by reason.
type SkipCounts map[string]int

// Reasons used in [SkipCounts].
const (
	SkipAllNaN          = "all-NaN frame"
	SkipTimeGap         = "dropped frame (time gap)"
	SkipUnreadableFrame = "unreadable frame"
)

// CellCounts counts cells of delivered frames that the source masked
// (made unknown) although the file gave them a value, by reason.
type CellCounts map[string]int64

// Reasons used in [CellCounts].
const (
	// MaskValidRange: outside the variable's valid_range, valid_min or
	// valid_max (CF-1.8 §2.5.1).
	MaskValidRange = "outside valid_range/valid_min/valid_max"
	// MaskBound: farther from 0 than ElevationOptions.MaxAbsElevationM.
	MaskBound = "beyond the elevation bound"
	// MaskSpike: a spike by the robust per-frame test
	// (ElevationOptions.SpikeFactor, SpikeMinM).
	MaskSpike = "spike (far from the frame median)"
)

// ElevationSource streams the frames of an elevation-map file. It is not
// safe for concurrent use; open one source per goroutine if needed.
// Frames are read ahead, a chunk row at a time, on a goroutine of the
// source's own.
type ElevationSource struct {
	path  string
	f     *netcdf.File
	opt   ElevationOptions
	names Names
	meta  ElevationMeta
	gaps  []Gap
	dt    float64

	next    int // index of the next frame to examine
	visited int // frames [0, visited) have been examined at least once

	allNaN     int      // all-NaN frames found (each counted once)
	unreadable int      // unreadable frames found (each counted once)
	badLimit   int      // unreadable frames allowed
	noLimit    bool     // a multi-file source applies the limit record-wide
	part       bool     // a part of a multi-file record (may hold one frame)
	masked     [3]int64 // cells masked: valid range, bound, spike
	firstBad   string   // message of the first unreadable frame
	warnings   []string // about the layout, for the caller to show

	unit   float64 // factor from the elevation units to metres
	layout layout  // how frames lie in the file
	rd     reader  // block reads with read-ahead
	mp     maskParams
}

// OpenElevation opens an elevation-map file and checks it against the
// contract described in the package documentation, with the layouts and
// conventions the options describe. Each failure is a single sentence
// naming the file and what is wrong or which setting fixes it.
func OpenElevation(path string, opt ElevationOptions) (*ElevationSource, error) {
	return openElevation(path, opt, false)
}

// openElevation opens one file; a part of a multi-file record (part) may
// hold a single frame.
func openElevation(path string, opt ElevationOptions, part bool) (*ElevationSource, error) {
	o, err := opt.withDefaults()
	if err != nil {
		return nil, err
	}
	f, err := netcdf.Open(path)
	if err != nil {
		switch {
		case errors.Is(err, fs.ErrNotExist):
			return nil, fmt.Errorf("ingest: elevation-map file %s does not exist; check the path", path)
		case errors.Is(err, netcdf.ErrTruncated):
			return nil, fmt.Errorf("ingest: %w", trimPrefix{err})
		case errors.Is(err, netcdf.ErrNotNetCDF):
			if strings.Contains(err.Error(), "classic-format header") {
				return nil, fmt.Errorf("ingest: %w", trimPrefix{err})
			}
			return nil, fmt.Errorf("ingest: %s is not a NetCDF file or is damaged (truncated or not NetCDF); give a complete NetCDF elevation-map file", path)
		}
		return nil, fmt.Errorf("ingest: cannot open elevation-map file: %w", err)
	}
	s := &ElevationSource{path: path, f: f, opt: o, names: DefaultNames(), part: part}
	s.names.Foam = o.FoamVariable
	if err := s.check(); err != nil {
		f.Close()
		return nil, err
	}
	if err := s.plan(); err != nil {
		f.Close()
		return nil, err
	}
	nt := len(s.meta.Times)
	s.badLimit = int(math.Ceil(o.MaxUnreadableFraction * float64(nt)))
	return s, nil
}

// trimPrefix shows a netcdf error without its "netcdf: " prefix, keeping
// it for errors.Is.
type trimPrefix struct{ err error }

func (e trimPrefix) Error() string { return strings.TrimPrefix(e.err.Error(), "netcdf: ") }
func (e trimPrefix) Unwrap() error { return e.err }

func (s *ElevationSource) errorf(format string, a ...any) error {
	return fmt.Errorf("ingest: %s: "+format, append([]any{s.path}, a...)...)
}

// check validates the file and fills meta, gaps, dt, the layout and the
// masking parameters.
func (s *ElevationSource) check() error {
	f, o := s.f, s.opt
	eta, err := s.chooseVariable(o.Variable)
	if err != nil {
		return err
	}
	s.names.Eta = eta
	dims, err := f.VarDims(eta)
	if err != nil {
		return s.errorf("cannot read the dimensions of %q: %v", eta, err)
	}
	if len(dims) != 3 {
		return s.errorf("variable %q has %d dimensions (%s); expected three, time, y and x in any order (set %s to another variable)",
			eta, len(dims), strings.Join(dims, ","), settingVariable)
	}
	pos, err := s.resolveDims(dims, o)
	if err != nil {
		return err
	}
	s.names.Time, s.names.Y, s.names.X = dims[pos[axisT]], dims[pos[axisY]], dims[pos[axisX]]
	typ, err := f.VarType(eta)
	if err != nil {
		return s.errorf("cannot read the type of %q: %v", eta, err)
	}
	if !typ.Numeric() {
		return s.errorf("variable %q has type %s; expected numeric elevations in metres", eta, typ)
	}
	unit, err := s.lengthUnit(eta)
	if err != nil {
		return err
	}
	s.unit = unit

	// Horizontal axes, each from a 1-D coordinate variable or a 2-D array.
	var axes [3][]float64
	var flip [3]bool
	for _, r := range []int{axisY, axisX} {
		v, err := s.spatialAxis(dims, pos, r)
		if err != nil {
			return err
		}
		// A decreasing axis (rows stored north to south, say) is turned
		// round on read.
		if len(v) >= 2 && v[len(v)-1] < v[0] {
			slices.Reverse(v)
			flip[r] = true
		}
		if err := checkAxis(v); err != nil {
			return s.errorf("coordinate %q %v", s.coordName(dims[pos[r]]), err)
		}
		axes[r] = v
	}
	s.meta.Grid = Grid{Y: axes[axisY], X: axes[axisX]}

	if err := s.timeAxis(); err != nil {
		return err
	}

	if err := s.readGlobals(); err != nil {
		return err
	}

	shape, err := f.VarShape(eta)
	if err != nil {
		return s.errorf("cannot read the shape of %q: %v", eta, err)
	}
	s.layout = layout{dims: dims, shape: shape, pos: pos, flip: flip}
	if err := s.maskSetup(typ, unit); err != nil {
		return err
	}

	if f.HasVar(s.names.Foam) {
		return s.foamSetup(dims, pos, flip)
	}
	return nil
}

// foamSetup checks the optional foam mask, which must span the elevation's
// dimensions (dims, in any order) as bytes, and records its layout and
// fill value.
func (s *ElevationSource) foamSetup(dims []string, pos [3]int, flip [3]bool) error {
	f, eta := s.f, s.names.Eta
	fd, err := f.VarDims(s.names.Foam)
	if err != nil {
		return s.errorf("cannot read the dimensions of %q: %v", s.names.Foam, err)
	}
	if len(fd) != 3 || !sameSet(fd, dims) {
		return s.errorf("variable %q has dimensions (%s); expected the dimensions of %q (%s) in any order",
			s.names.Foam, strings.Join(fd, ","), eta, strings.Join(dims, ","))
	}
	ft, err := f.VarType(s.names.Foam)
	if err != nil {
		return s.errorf("cannot read the type of %q: %v", s.names.Foam, err)
	}
	if ft != netcdf.Uint8 && ft != netcdf.Int8 {
		return s.errorf("variable %q has type %s; expected a byte mask (0 water, 1 whitecap)", s.names.Foam, ft)
	}
	fv, _, ok, err := f.FillValue(s.names.Foam)
	if err != nil {
		return s.errorf("cannot read the fill value of %q: %v", s.names.Foam, err)
	}
	if ok {
		s.mp.foamFill, s.mp.hasFoamFill = uint8(int64(fv)), true
	}
	var fpos [3]int
	for r := range fpos {
		fpos[r] = slices.Index(fd, dims[pos[r]])
	}
	fshape, _ := f.VarShape(s.names.Foam)
	s.layout.foam = &layout{dims: fd, shape: fshape, pos: fpos, flip: flip}
	s.meta.HasFoam = true
	return nil
}

// readGlobals reads the global attributes: the water depth, the
// georeference, the title and the other text attributes.
func (s *ElevationSource) readGlobals() error {
	f := s.f
	depth, ok, err := f.AttFloat64("", "water_depth_m")
	if err != nil {
		return s.errorf("cannot read the global attribute water_depth_m: %v", err)
	}
	if ok {
		if math.IsNaN(depth) || math.IsInf(depth, 0) {
			return s.errorf("global attribute water_depth_m is %g; give the depth in metres, or 0 or nothing for deep water", depth)
		}
		if depth > 0 {
			s.meta.DepthM = depth
		}
	}
	if err := s.readGeoref(); err != nil {
		return err
	}
	attrs, err := f.TextAtts("")
	if err != nil {
		return s.errorf("cannot read the global attributes: %v", err)
	}
	s.meta.Title = attrs["title"]
	delete(attrs, "title")
	s.meta.Attrs = attrs
	return nil
}

// coordName returns the coordinate variable that gave the axis of dim.
func (s *ElevationSource) coordName(dim string) string {
	if c := s.coordFor(dim); c.name != "" {
		return c.name
	}
	return dim
}

// spatialAxis reads the cell centres of the spatial role r: from the 1-D
// coordinate variable of its dimension, else from a 2-D coordinate array
// that must describe a regular grid.
func (s *ElevationSource) spatialAxis(dims []string, pos [3]int, r int) ([]float64, error) {
	dim := dims[pos[r]]
	if c := s.coordFor(dim); c.name != "" {
		v, err := s.f.ReadFloat64(c.name)
		if err != nil {
			return nil, s.errorf("cannot read coordinate %q: %v", c.name, err)
		}
		if err := s.checkUnits(c.name); err != nil {
			return nil, err
		}
		return v, nil
	}
	if s.f.HasVar(dim) {
		d, _ := s.f.VarDims(dim)
		if len(d) != 2 {
			return nil, s.errorf("coordinate variable %q has dimensions (%s); expected (%s)", dim, strings.Join(d, ","), dim)
		}
	}
	xv, yv := s.coords2D(dims[pos[axisY]], dims[pos[axisX]])
	name := xv
	if r == axisY {
		name = yv
	}
	if name == "" {
		return nil, s.errorf("has no coordinate variable for dimension %q: add %s(%s) holding the cell centres in metres, or 2-D coordinate arrays x(y,x) and y(y,x) listed in the coordinates attribute of %q",
			dim, dim, dim, s.names.Eta)
	}
	vd, _ := s.f.VarDims(name)
	shape, _ := s.f.VarShape(name)
	v, err := s.f.ReadFloat64(name)
	if err != nil {
		return nil, s.errorf("cannot read coordinate %q: %v", name, err)
	}
	if err := s.checkUnits(name); err != nil {
		return nil, err
	}
	// Read the axis along the role's dimension; it must not change across
	// the other (within the spacing tolerance).
	ax, err := regularFrom2D(v, shape[0], shape[1], vd[0] == dim, spacingTol)
	if err != nil {
		return nil, s.errorf("2-D coordinate %q %v", name, err)
	}
	return ax, nil
}

// timeAxis reads the time coordinate, converts it to seconds, checks it and
// finds the gaps.
func (s *ElevationSource) timeAxis() error {
	f, n := s.f, s.names
	c := s.coordFor(n.Time)
	if c.name == "" {
		if f.HasVar(n.Time) {
			d, _ := f.VarDims(n.Time)
			return s.errorf("coordinate variable %q has dimensions (%s); expected (%s)", n.Time, strings.Join(d, ","), n.Time)
		}
		return s.errorf("has no coordinate variable for dimension %q: add %s(%s) holding the time of each frame, with CF units such as \"seconds since 2026-06-01T00:00:00Z\"", n.Time, n.Time, n.Time)
	}
	times, err := f.ReadFloat64(c.name)
	if err != nil {
		return s.errorf("cannot read coordinate %q: %v", c.name, err)
	}
	if len(times) < 2 && !(s.part && len(times) == 1) {
		return s.errorf("holds %d frame(s) along %q; at least 2 are needed to follow the surface in time", len(times), n.Time)
	}
	units, hasUnits, err := f.AttText(c.name, "units")
	if err != nil {
		return s.errorf("cannot read the units of %q: %v", c.name, err)
	}
	if hasUnits {
		factor, ref, err := parseTimeUnits(units)
		if err != nil {
			return s.errorf("coordinate %q has units %q, %v", c.name, units, err)
		}
		if factor != 1 {
			for i := range times {
				times[i] *= factor
			}
			units = "seconds" + ref
		}
		s.meta.TimeUnits = units
	}
	for i, t := range times {
		if math.IsNaN(t) || math.IsInf(t, 0) {
			return s.errorf("time %d is not a finite number; remove or fix that frame", i)
		}
		if i > 0 && !(t > times[i-1]) {
			return s.errorf("time is not strictly increasing at index %d (%g s after %g s); sort the frames by time and remove duplicates", i, t, times[i-1])
		}
	}
	s.meta.Times = times
	if len(times) >= 2 {
		s.dt, s.gaps = findGaps(times, s.opt.GapFactor)
	}
	return nil
}

// sameSet reports whether a and b hold the same names.
func sameSet(a, b []string) bool {
	x, y := slices.Clone(a), slices.Clone(b)
	slices.Sort(x)
	slices.Sort(y)
	return slices.Equal(x, y)
}

// lengthUnit returns the factor from the elevation variable's units to
// metres (1 when it has none).
func (s *ElevationSource) lengthUnit(name string) (float64, error) {
	u, ok, err := s.f.AttText(name, "units")
	if err != nil {
		return 0, s.errorf("cannot read the units of %q: %v", name, err)
	}
	if !ok {
		return 1, nil
	}
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "m", "metre", "metres", "meter", "meters":
		return 1, nil
	case "cm", "centimetre", "centimetres", "centimeter", "centimeters":
		return 0.01, nil
	case "mm", "millimetre", "millimetres", "millimeter", "millimeters":
		return 0.001, nil
	}
	return 0, s.errorf("variable %q has units %q; expected metres (\"m\"), centimetres or millimetres; convert it to metres", name, u)
}

// checkUnits accepts a coordinate without units or with units of metres.
func (s *ElevationSource) checkUnits(name string) error {
	u, ok, err := s.f.AttText(name, "units")
	if err != nil {
		return s.errorf("cannot read the units of %q: %v", name, err)
	}
	if !ok {
		return nil
	}
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "m", "metre", "metres", "meter", "meters":
		return nil
	}
	return s.errorf("variable %q has units %q; expected metres (\"m\"); convert it to metres", name, u)
}

// parseTimeUnits parses CF time units "<unit> [since <reference>]" and
// returns the factor to seconds and the " since ..." tail (or "").
func parseTimeUnits(u string) (factor float64, ref string, err error) {
	s := strings.TrimSpace(u)
	unit, rest := s, ""
	if i := strings.Index(strings.ToLower(s), " since "); i >= 0 {
		unit, rest = s[:i], s[i:]
	}
	switch strings.ToLower(strings.TrimSpace(unit)) {
	case "s", "sec", "secs", "second", "seconds":
		factor = 1
	case "ms", "msec", "msecs", "millisecond", "milliseconds":
		factor = 1e-3
	case "min", "mins", "minute", "minutes":
		factor = 60
	case "h", "hr", "hrs", "hour", "hours":
		factor = 3600
	case "d", "day", "days":
		factor = 86400
	default:
		return 0, "", errors.New(`which is not a time unit; expected for example "seconds since 2026-06-01T00:00:00Z"`)
	}
	return factor, rest, nil
}

// findGaps returns the median time step and the dropped-frame gaps: steps
// longer than gapFactor times the median, each missing round(step/median)-1
// frames (at least one).
func findGaps(times []float64, gapFactor float64) (float64, []Gap) {
	steps := make([]float64, len(times)-1)
	for i := range steps {
		steps[i] = times[i+1] - times[i]
	}
	sorted := slices.Clone(steps)
	slices.Sort(sorted)
	m := len(sorted)
	med := sorted[m/2]
	if m%2 == 0 {
		med = 0.5 * (sorted[m/2-1] + sorted[m/2])
	}
	var gaps []Gap
	for i, st := range steps {
		if st > gapFactor*med {
			miss := max(int(math.Round(st/med))-1, 1)
			gaps = append(gaps, Gap{AfterIndex: i, Start: times[i], End: times[i+1], Missing: miss})
		}
	}
	return med, gaps
}

// Meta returns a description of the record. The slices and map are copies.
func (s *ElevationSource) Meta() ElevationMeta { return s.meta.clone() }

// clone copies m with its own grid axes, times and attributes.
func (m ElevationMeta) clone() ElevationMeta {
	m.Grid = Grid{X: slices.Clone(m.Grid.X), Y: slices.Clone(m.Grid.Y)}
	m.Times = slices.Clone(m.Times)
	m.Attrs = maps.Clone(m.Attrs)
	return m
}

// Path returns the file path the source reads.
func (s *ElevationSource) Path() string { return s.path }

// Variable returns the name of the elevation variable that is read.
func (s *ElevationSource) Variable() string { return s.names.Eta }

// FrameInterval returns the median time step of the record, in seconds.
func (s *ElevationSource) FrameInterval() float64 { return s.dt }

// Gaps returns the dropped-frame gaps found on the time axis.
func (s *ElevationSource) Gaps() []Gap { return slices.Clone(s.gaps) }

// Warnings returns remarks about the file that do not stop the reading
// (a layout that can only be read slowly, say), one sentence each.
func (s *ElevationSource) Warnings() []string { return slices.Clone(s.warnings) }

// Paths returns the one file the source reads.
func (s *ElevationSource) Paths() []string { return []string{s.path} }

// Skipped returns the number of frames not delivered, by reason: all-NaN
// and unreadable frames met so far by Next (each counted once, however
// often the record is rewound) and frames missing in time gaps. Reasons
// with no frames are left out.
func (s *ElevationSource) Skipped() SkipCounts {
	c := s.frameSkips()
	addGapSkips(c, s.gaps)
	return c
}

// addGapSkips counts in c, under SkipTimeGap, the frames missing in gaps,
// when there are any.
func addGapSkips(c SkipCounts, gaps []Gap) {
	miss := 0
	for _, g := range gaps {
		miss += g.Missing
	}
	if miss > 0 {
		c[SkipTimeGap] = miss
	}
}

// frameSkips counts the frames Next skipped, without the time gaps.
func (s *ElevationSource) frameSkips() SkipCounts {
	c := SkipCounts{}
	if s.allNaN > 0 {
		c[SkipAllNaN] = s.allNaN
	}
	if s.unreadable > 0 {
		c[SkipUnreadableFrame] = s.unreadable
	}
	return c
}

// MaskedCells returns the number of cells the source masked in the frames
// met so far by Next (each frame counted once), by reason; cells the file
// itself marks unknown (NaN, _FillValue, missing_value) are not counted.
func (s *ElevationSource) MaskedCells() CellCounts {
	c := CellCounts{}
	for i, r := range []string{MaskValidRange, MaskBound, MaskSpike} {
		if s.masked[i] > 0 {
			c[r] = s.masked[i]
		}
	}
	return c
}

// Rewind makes the next call to Next return the first frame again.
func (s *ElevationSource) Rewind() {
	s.next = 0
	s.rd.rewind()
}

// Close releases the file. Next fails after Close.
func (s *ElevationSource) Close() error {
	if s.f == nil {
		return nil
	}
	s.rd.stop()
	if s.rd.direct != nil {
		s.rd.direct.Close()
	}
	// let the read-ahead blocks go with the file
	s.rd.bufs, s.rd.cur = [2]*block{}, nil
	s.rd.scratch.f32, s.rd.scratch.f64, s.rd.scratch.u8 = nil, nil, nil
	err := s.f.Close()
	s.f = nil
	return err
}

// Next reads the next frame that has at least one known cell into f,
// reusing f's slices when they are large enough. It returns io.EOF after
// the last frame. Frames in which every cell is unknown, and frames that
// cannot be read (a damaged chunk), are skipped and counted (see Skipped);
// when more unreadable frames are met than ElevationOptions allows, Next
// returns an error.
func (s *ElevationSource) Next(f *Frame) error {
	if s.f == nil {
		return fmt.Errorf("ingest: %s: elevation source is closed", s.path)
	}
	n := s.meta.Grid.Nx() * s.meta.Grid.Ny()
	f.Eta = grow(f.Eta, n)
	f.Valid = grow(f.Valid, n)
	if s.meta.HasFoam {
		f.Foam = grow(f.Foam, n)
	} else {
		f.Foam = nil
	}
	for ; s.next < len(s.meta.Times); s.next++ {
		k := s.next
		first := k >= s.visited
		if first {
			s.visited = k + 1
		}
		blk, i, err := s.rd.frame(k)
		if err != nil {
			return s.errorf("%v", err)
		}
		if blk.bad[i] != nil {
			if first {
				s.unreadable++
				if s.firstBad == "" {
					s.firstBad = blk.bad[i].Error()
				}
			}
			if err := s.checkUnreadable(); err != nil {
				return err
			}
			continue
		}
		var counts [3]int64
		nValid := s.mp.frame(blk, i, f.Eta, f.Valid, &counts)
		if first {
			for r := range counts {
				s.masked[r] += counts[r]
			}
			if nValid == 0 {
				s.allNaN++
			}
		}
		if nValid == 0 {
			continue
		}
		if s.meta.HasFoam {
			s.mp.foamFrame(blk, i, f.Foam)
		}
		f.Index = k
		f.Time = s.meta.Times[k]
		s.next++
		return nil
	}
	return io.EOF
}

// checkUnreadable refuses the record when too many frames are unreadable.
func (s *ElevationSource) checkUnreadable() error {
	bad, nt, limit := s.unreadable, len(s.meta.Times), s.badLimit
	if !s.noLimit && bad > limit {
		return s.errorf("%d of its %d frames are unreadable (first: %s), more than the %d (%g %%) that max_unreadable_fraction lets be skipped; the file is damaged: copy it again or repair it",
			bad, nt, s.firstBad, limit, 100*s.opt.MaxUnreadableFraction)
	}
	return nil
}

// grow returns s resized to n, reusing its storage when the capacity allows.
func grow[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n)
}

// readGeoref reads the grid's heading and origin written by this package's
// writer (grid_heading_deg, grid_origin_latitude_deg,
// grid_origin_longitude_deg).
func (s *ElevationSource) readGeoref() error {
	get := func(name string) (float64, bool, error) {
		v, ok, err := s.f.AttFloat64("", name)
		if err != nil {
			return 0, false, s.errorf("cannot read the global attribute %s: %v", name, err)
		}
		return v, ok, nil
	}
	h, ok, err := get("grid_heading_deg")
	if err != nil || !ok {
		return err
	}
	g := &Georef{HeadingDeg: h, LatDeg: math.NaN(), LonDeg: math.NaN()}
	if lat, ok, err := get("grid_origin_latitude_deg"); err != nil {
		return err
	} else if ok {
		g.LatDeg = lat
	}
	if lon, ok, err := get("grid_origin_longitude_deg"); err != nil {
		return err
	} else if ok {
		g.LonDeg = lon
	}
	if err := g.check(); err != nil {
		return s.errorf("the grid georeference attributes are invalid: %v", err)
	}
	s.meta.Georef = g
	return nil
}
