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

// ElevationOptions configure [OpenElevation]. The zero value uses the
// default names and gap factor.
type ElevationOptions struct {
	// Names of dimensions and variables; empty fields take the defaults.
	Names Names
	// GapFactor: a time step longer than GapFactor times the median step is
	// a dropped-frame gap. 0 means the default, 1.5; otherwise it must be
	// greater than 1.
	GapFactor float64
}

// DefaultGapFactor is the default [ElevationOptions.GapFactor] (common
// practice: half an interval of slack catches a single dropped frame while
// tolerating timestamp jitter).
const DefaultGapFactor = 1.5

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
}

// Frame is one elevation map. Next fills it, reusing its slices when they
// are large enough.
type Frame struct {
	Index int       // index of the frame on the file's time axis
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
	SkipAllNaN  = "all-NaN frame"
	SkipTimeGap = "dropped frame (time gap)"
)

// ElevationSource streams the frames of an elevation-map file. It is not
// safe for concurrent use; open one source per goroutine if needed.
type ElevationSource struct {
	path  string
	f     *netcdf.File
	names Names
	meta  ElevationMeta
	gaps  []Gap
	dt    float64

	next    int // index of the next frame to examine
	visited int // frames [0, visited) have been examined at least once
	allNaN  int // all-NaN frames found (each counted once)

	fill, missing       float32
	hasFill, hasMissing bool
	foamFill            uint8
	hasFoamFill         bool

	start, count []int // hyperslab vectors, reused
}

// OpenElevation opens an elevation-map file and checks it against the
// contract described in the package documentation. Each failure is a single
// sentence naming the file and what is wrong.
func OpenElevation(path string, opt ElevationOptions) (*ElevationSource, error) {
	names := opt.Names.withDefaults()
	gapFactor := opt.GapFactor
	if gapFactor == 0 {
		gapFactor = DefaultGapFactor
	}
	if !(gapFactor > 1) || math.IsInf(gapFactor, 0) {
		return nil, fmt.Errorf("ingest: gap factor %g is invalid; it must be a finite number greater than 1 (default %g)", opt.GapFactor, DefaultGapFactor)
	}
	f, err := netcdf.Open(path)
	if err != nil {
		switch {
		case errors.Is(err, fs.ErrNotExist):
			return nil, fmt.Errorf("ingest: elevation-map file %s does not exist; check the path", path)
		case errors.Is(err, netcdf.ErrNotNetCDF):
			return nil, fmt.Errorf("ingest: %s is not a NetCDF file or is damaged (truncated or not NetCDF); give a complete NetCDF elevation-map file", path)
		}
		return nil, fmt.Errorf("ingest: cannot open elevation-map file: %w", err)
	}
	s := &ElevationSource{path: path, f: f, names: names}
	if err := s.check(gapFactor); err != nil {
		f.Close()
		return nil, err
	}
	ny, nx := s.meta.Grid.Ny(), s.meta.Grid.Nx()
	s.start = []int{0, 0, 0}
	s.count = []int{1, ny, nx}
	return s, nil
}

func (s *ElevationSource) errorf(format string, a ...any) error {
	return fmt.Errorf("ingest: %s: "+format, append([]any{s.path}, a...)...)
}

// check validates the file and fills meta, gaps, dt and the fill values.
func (s *ElevationSource) check(gapFactor float64) error {
	f, n := s.f, s.names
	if !f.HasVar(n.Eta) {
		return s.errorf("no elevation variable %q; name the variable that holds the elevation maps in the configuration", n.Eta)
	}
	dims, err := f.VarDims(n.Eta)
	if err != nil {
		return s.errorf("cannot read the dimensions of %q: %v", n.Eta, err)
	}
	want := []string{n.Time, n.Y, n.X}
	if !slices.Equal(dims, want) {
		return s.errorf("variable %q has dimensions (%s); expected (%s); transpose it (time slowest, x fastest) or configure the dimension names",
			n.Eta, strings.Join(dims, ","), strings.Join(want, ","))
	}
	typ, err := f.VarType(n.Eta)
	if err != nil {
		return s.errorf("cannot read the type of %q: %v", n.Eta, err)
	}
	if typ != netcdf.Float32 && typ != netcdf.Float64 {
		return s.errorf("variable %q has type %s; expected float (float32) elevations in metres", n.Eta, typ)
	}
	for _, a := range []string{"scale_factor", "add_offset"} {
		if _, ok, _ := f.AttFloat64(n.Eta, a); ok {
			return s.errorf("variable %q is packed (has %s); store unpacked float32 elevations in metres", n.Eta, a)
		}
	}
	if err := s.checkUnits(n.Eta); err != nil {
		return err
	}

	// Coordinates.
	var axes [2][]float64
	for i, name := range []string{n.Y, n.X} {
		v, err := s.readCoord(name)
		if err != nil {
			return err
		}
		if err := checkAxis(v); err != nil {
			return s.errorf("coordinate %q %v", name, err)
		}
		if err := s.checkUnits(name); err != nil {
			return err
		}
		axes[i] = v
	}
	s.meta.Grid = Grid{Y: axes[0], X: axes[1]}

	times, err := s.readCoord(n.Time)
	if err != nil {
		return err
	}
	if len(times) < 2 {
		return s.errorf("holds %d frame(s) along %q; at least 2 are needed to follow the surface in time", len(times), n.Time)
	}
	units, hasUnits, err := f.AttText(n.Time, "units")
	if err != nil {
		return s.errorf("cannot read the units of %q: %v", n.Time, err)
	}
	if hasUnits {
		factor, ref, err := parseTimeUnits(units)
		if err != nil {
			return s.errorf("coordinate %q has units %q, %v", n.Time, units, err)
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
	s.dt, s.gaps = findGaps(times, gapFactor)

	// Global attributes.
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
	attrs, err := f.TextAtts("")
	if err != nil {
		return s.errorf("cannot read the global attributes: %v", err)
	}
	s.meta.Title = attrs["title"]
	delete(attrs, "title")
	s.meta.Attrs = attrs

	// Fill values of eta.
	if fv, _, ok, err := f.FillValue(n.Eta); err != nil {
		return s.errorf("cannot read the fill value of %q: %v", n.Eta, err)
	} else if ok {
		s.fill, s.hasFill = float32(fv), true
	}
	if mv, ok, err := f.AttFloat64(n.Eta, "missing_value"); err != nil {
		return s.errorf("cannot read missing_value of %q: %v", n.Eta, err)
	} else if ok {
		s.missing, s.hasMissing = float32(mv), true
	}

	// Optional foam mask.
	if f.HasVar(n.Foam) {
		fd, err := f.VarDims(n.Foam)
		if err != nil {
			return s.errorf("cannot read the dimensions of %q: %v", n.Foam, err)
		}
		if !slices.Equal(fd, want) {
			return s.errorf("variable %q has dimensions (%s); expected (%s) like %q", n.Foam, strings.Join(fd, ","), strings.Join(want, ","), n.Eta)
		}
		ft, err := f.VarType(n.Foam)
		if err != nil {
			return s.errorf("cannot read the type of %q: %v", n.Foam, err)
		}
		if ft != netcdf.Uint8 && ft != netcdf.Int8 {
			return s.errorf("variable %q has type %s; expected a byte mask (0 water, 1 whitecap)", n.Foam, ft)
		}
		fv, _, ok, err := f.FillValue(n.Foam)
		if err != nil {
			return s.errorf("cannot read the fill value of %q: %v", n.Foam, err)
		}
		if ok {
			s.foamFill, s.hasFoamFill = uint8(int64(fv)), true
		}
		s.meta.HasFoam = true
	}
	return nil
}

// readCoord reads a one-dimensional coordinate variable over the dimension of
// the same name.
func (s *ElevationSource) readCoord(name string) ([]float64, error) {
	if !s.f.HasVar(name) {
		return nil, s.errorf("no coordinate variable %q; add it (one value per cell, or per frame for time) or configure its name", name)
	}
	dims, err := s.f.VarDims(name)
	if err != nil {
		return nil, s.errorf("cannot read the dimensions of %q: %v", name, err)
	}
	if len(dims) != 1 || dims[0] != name {
		return nil, s.errorf("coordinate variable %q has dimensions (%s); expected (%s)", name, strings.Join(dims, ","), name)
	}
	v, err := s.f.ReadFloat64(name)
	if err != nil {
		return nil, s.errorf("cannot read coordinate %q: %v", name, err)
	}
	return v, nil
}

// checkUnits accepts a variable without units or with units of metres.
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
func (s *ElevationSource) Meta() ElevationMeta {
	m := s.meta
	m.Grid = Grid{X: slices.Clone(m.Grid.X), Y: slices.Clone(m.Grid.Y)}
	m.Times = slices.Clone(m.Times)
	m.Attrs = maps.Clone(m.Attrs)
	return m
}

// Path returns the file path the source reads.
func (s *ElevationSource) Path() string { return s.path }

// FrameInterval returns the median time step of the record, in seconds.
func (s *ElevationSource) FrameInterval() float64 { return s.dt }

// Gaps returns the dropped-frame gaps found on the time axis.
func (s *ElevationSource) Gaps() []Gap { return slices.Clone(s.gaps) }

// Skipped returns the number of frames not delivered, by reason: all-NaN
// frames met so far by Next (each counted once, however often the record is
// rewound) and frames missing in time gaps. Reasons with no frames are left
// out.
func (s *ElevationSource) Skipped() SkipCounts {
	c := SkipCounts{}
	if s.allNaN > 0 {
		c[SkipAllNaN] = s.allNaN
	}
	miss := 0
	for _, g := range s.gaps {
		miss += g.Missing
	}
	if miss > 0 {
		c[SkipTimeGap] = miss
	}
	return c
}

// Rewind makes the next call to Next return the first frame again.
func (s *ElevationSource) Rewind() { s.next = 0 }

// Close releases the file. Next fails after Close.
func (s *ElevationSource) Close() error {
	if s.f == nil {
		return nil
	}
	err := s.f.Close()
	s.f = nil
	return err
}

// Next reads the next frame that has at least one known cell into f,
// reusing f's slices when they are large enough. It returns io.EOF after
// the last frame. Frames in which every cell is unknown are skipped and
// counted (see Skipped).
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
		s.start[0] = k
		if err := s.f.ReadFloat32Slab(s.names.Eta, s.start, s.count, f.Eta); err != nil {
			return s.errorf("cannot read frame %d of %q (the file may be truncated or damaged): %v", k, s.names.Eta, err)
		}
		nValid := s.mask(f.Eta, f.Valid)
		if k >= s.visited {
			s.visited = k + 1
			if nValid == 0 {
				s.allNaN++
			}
		}
		if nValid == 0 {
			continue
		}
		if s.meta.HasFoam {
			if err := s.f.ReadUint8Slab(s.names.Foam, s.start, s.count, f.Foam); err != nil {
				return s.errorf("cannot read frame %d of %q (the file may be truncated or damaged): %v", k, s.names.Foam, err)
			}
			if s.hasFoamFill {
				for i, v := range f.Foam {
					if v == s.foamFill {
						f.Foam[i] = 0
					}
				}
			}
		}
		f.Index = k
		f.Time = s.meta.Times[k]
		s.next++
		return nil
	}
	return io.EOF
}

// mask turns fill, missing and non-finite values into NaN, sets valid and
// returns the number of valid cells.
func (s *ElevationSource) mask(eta []float32, valid []bool) int {
	nan := float32(math.NaN())
	count := 0
	for i, v := range eta {
		// v-v is 0 for finite v and NaN for NaN and ±Inf.
		ok := v-v == 0 && !(s.hasFill && v == s.fill) && !(s.hasMissing && v == s.missing)
		if !ok {
			eta[i] = nan
		} else {
			count++
		}
		valid[i] = ok
	}
	return count
}

// grow returns s resized to n, reusing its storage when the capacity allows.
func grow[T any](s []T, n int) []T {
	if cap(s) >= n {
		return s[:n]
	}
	return make([]T, n)
}
