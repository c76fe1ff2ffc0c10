package ingest

import (
	"fmt"
	"maps"
	"math"
	"slices"
	"strconv"
	"strings"
	"time"

	"crestspeed/internal/netcdf"
)

// WriteOptions configure [CreateElevation]. The zero value writes the
// default names, deflate level 4, times in seconds since 1970-01-01, deep
// water, no foam, no georeference.
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
	// Summary is the ACDD summary, a paragraph on what the file holds;
	// default a sentence from the grid and the record.
	Summary string
	// Platform names the platform the rig stood on (ACDD platform); written
	// when given.
	Platform string
	// Georef places the grid on the Earth; nil when unknown (no latitude,
	// longitude or geospatial bounds are then written).
	Georef *Georef
	// Attrs are extra global text attributes (provenance: institution,
	// source, comment, references, ...). A "history" entry is kept and the
	// writer's own line appended to it. The attributes the writer sets
	// itself (Conventions, title, summary, the ACDD time and space
	// coverage, water_depth_m, grid_spacing_m, ...) cannot be overridden
	// here; a text grid_spacing_m is replaced by the number.
	Attrs map[string]string
	// NumAttrs are extra numeric global attributes, stored as doubles.
	NumAttrs map[string]float64
	// Created is the creation time written to date_created and history;
	// zero means now. Set it to make reruns byte-identical.
	Created time.Time
	// WithFoam adds the foam(time, y, x) mask variable; WriteFrame then
	// needs a mask for every frame.
	WithFoam bool
	// WithPointCounts adds point_count(time, y, x), the number of points
	// averaged into each cell's elevation; write it with WriteCounts after
	// each frame.
	WithPointCounts bool
}

// Georef places an elevation-map grid on the Earth.
type Georef struct {
	// HeadingDeg is the bearing of the grid's +x axis, in degrees clockwise
	// from true north; +y points 90° anticlockwise from +x (z up).
	HeadingDeg float64
	// LatDeg and LonDeg are the WGS 84 latitude and longitude of the grid
	// origin, the point x = 0, y = 0; both NaN when only the heading is
	// known (the grid then carries no latitude and longitude).
	LatDeg, LonDeg float64
}

// Placed reports whether the georeference has a position, not only a
// heading.
func (g *Georef) Placed() bool { return !math.IsNaN(g.LatDeg) && !math.IsNaN(g.LonDeg) }

// check reports why g cannot be written, or nil.
func (g *Georef) check() error {
	bad := func(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }
	switch {
	case bad(g.HeadingDeg):
		return fmt.Errorf("heading %g° is not a finite bearing", g.HeadingDeg)
	case math.IsNaN(g.LatDeg) && math.IsNaN(g.LonDeg):
		return nil // heading only
	case bad(g.LatDeg) || math.Abs(g.LatDeg) >= 89:
		return fmt.Errorf("latitude %g° is outside (-89°, 89°)", g.LatDeg)
	case bad(g.LonDeg) || math.Abs(g.LonDeg) > 360:
		return fmt.Errorf("longitude %g° is outside [-360°, 360°]", g.LonDeg)
	}
	return nil
}

// WGS 84 ellipsoid (NIMA TR8350.2, 3rd ed., 2000).
const (
	wgs84A    = 6378137.0
	wgs84InvF = 298.257223563
)

// LatLon returns the latitude and longitude, in degrees, of the point (x,
// y) of the grid, in metres. Northing and easting from the origin are
// turned into angles by the meridional and prime-vertical radii of
// curvature of the WGS 84 ellipsoid at the mean latitude of the origin and
// the point (the mid-latitude form of the local-plane approximation; e.g.
// Torge & Müller, Geodesy, 4th ed., 2012, §6.2), whose error grows as the
// square of the distance: below a millimetre within a kilometre.
func (g *Georef) LatLon(x, y float64) (lat, lon float64) {
	h := g.HeadingDeg * math.Pi / 180
	east := x*math.Sin(h) - y*math.Cos(h)
	north := x*math.Cos(h) + y*math.Sin(h)
	f := 1 / wgs84InvF
	e2 := f * (2 - f)
	radii := func(phi float64) (m, n float64) {
		w := 1 - e2*math.Sin(phi)*math.Sin(phi)
		return wgs84A * (1 - e2) / (w * math.Sqrt(w)), wgs84A / math.Sqrt(w)
	}
	phi0 := g.LatDeg * math.Pi / 180
	phi := phi0
	for range 3 { // the mean latitude depends on the point's latitude
		m, _ := radii(0.5 * (phi0 + phi))
		phi = phi0 + north/m
	}
	pm := 0.5 * (phi0 + phi)
	_, n := radii(pm)
	return phi * 180 / math.Pi, g.LonDeg + east/(n*math.Cos(pm))*180/math.Pi
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
	counts   bool    // the point_count variable is defined
	n        int     // frames written
	first    float64 // time of the first frame
	last     float64 // time of the last frame
	units    string
	steps    []float64 // time steps, for the time resolution

	tbuf           [1]float64
	start1, count1 []int
	start3, count3 []int
}

// PointCountVariable is the name of the points-per-cell variable written
// WithPointCounts.
const PointCountVariable = "point_count"

// WriteCounts writes the points per cell of the frame last written by
// WriteFrame (the writer must be created WithPointCounts).
func (ew *ElevationWriter) WriteCounts(counts []int32) error {
	switch {
	case ew.w == nil:
		return fmt.Errorf("ingest: %s: writer already committed or aborted", ew.path)
	case !ew.counts:
		return fmt.Errorf("ingest: %s: the writer was created without WithPointCounts", ew.path)
	case ew.n == 0:
		return fmt.Errorf("ingest: %s: point counts written before any frame", ew.path)
	case len(counts) != ew.ny*ew.nx:
		return fmt.Errorf("ingest: %s: %d point counts for a grid of %d cells", ew.path, len(counts), ew.ny*ew.nx)
	}
	ew.start3[0] = ew.n - 1
	if err := ew.w.PutInt32Slab(PointCountVariable, ew.start3, ew.count3, counts); err != nil {
		return fmt.Errorf("ingest: %w", err)
	}
	return nil
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
	if opt.Georef != nil {
		if err := opt.Georef.check(); err != nil {
			return nil, fmt.Errorf("ingest: cannot write %s: the georeference's %v", path, err)
		}
	}
	for k, v := range opt.NumAttrs {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("ingest: cannot write %s: numeric attribute %s is %g; give a finite number", path, k, v)
		}
	}
	nw, err := netcdf.Create(path)
	if err != nil {
		return nil, fmt.Errorf("ingest: %w", err)
	}
	ew := &ElevationWriter{
		path: path, w: nw, names: names, units: units,
		ny: grid.Ny(), nx: grid.Nx(), withFoam: opt.WithFoam, counts: opt.WithPointCounts,
		start1: []int{0}, count1: []int{1},
		start3: []int{0, 0, 0}, count3: []int{1, grid.Ny(), grid.Nx()},
	}
	if err := ew.define(grid, level, opt); err != nil {
		nw.Abort()
		return nil, fmt.Errorf("ingest: cannot write %s: %w", path, err)
	}
	return ew, nil
}

// Global attributes the writer sets itself.
var reservedAttrs = map[string]bool{
	"Conventions": true, "title": true, "summary": true, "water_depth_m": true, "water_depth_comment": true,
	"grid_spacing_m": true, "grid_spacing_x_m": true, "grid_spacing_y_m": true, "date_created": true,
	"time_coverage_start": true, "time_coverage_end": true, "time_coverage_duration": true, "time_coverage_resolution": true,
	"geospatial_lat_min": true, "geospatial_lat_max": true, "geospatial_lon_min": true, "geospatial_lon_max": true,
	"geospatial_lat_units": true, "geospatial_lon_units": true, "geospatial_bounds": true, "geospatial_bounds_crs": true,
	"grid_heading_deg": true, "platform": true, "cdm_data_type": true, "standard_name_vocabulary": true, "keywords": true,
}

// define writes the header and the coordinates.
func (ew *ElevationWriter) define(grid Grid, level int, opt WriteOptions) error {
	w, n := ew.w, ew.names
	ds := []string{n.Time, n.Y, n.X}
	created := opt.Created
	if created.IsZero() {
		created = time.Now()
	}
	created = created.UTC()
	text := func(v, name, value string) func() error {
		return func() error { return w.PutAttText(v, name, value) }
	}
	steps := []func() error{
		func() error { return w.DefDim(n.Time, 0) },
		func() error { return w.DefDim(n.Y, grid.Ny()) },
		func() error { return w.DefDim(n.X, grid.Nx()) },
		func() error { return w.DefVar(n.Time, netcdf.Float64, []string{n.Time}) },
		func() error { return w.SetChunks(n.Time, []int{1024}) },
		text(n.Time, "standard_name", "time"),
		text(n.Time, "long_name", "time of the elevation map"),
		text(n.Time, "units", ew.units),
		text(n.Time, "calendar", "standard"),
		text(n.Time, "axis", "T"),
		func() error { return w.DefVar(n.Y, netcdf.Float64, []string{n.Y}) },
		text(n.Y, "long_name", "y coordinate of the cell centre, horizontal"),
		text(n.Y, "units", "m"),
		text(n.Y, "axis", "Y"),
		func() error { return w.DefVar(n.X, netcdf.Float64, []string{n.X}) },
		text(n.X, "long_name", "x coordinate of the cell centre, horizontal"),
		text(n.X, "units", "m"),
		text(n.X, "axis", "X"),
		func() error { return w.DefVar(n.Eta, netcdf.Float32, ds) },
		func() error { return w.SetChunks(n.Eta, []int{1, grid.Ny(), grid.Nx()}) },
		func() error { return w.SetDeflate(n.Eta, level, level > 0) },
		func() error { return w.SetFill(n.Eta, math.NaN()) },
		// No standard_name: eta is the elevation about the mean of this
		// record, and the CF standard names for sea-surface height all
		// refer to a fixed datum (sea_surface_height_above_mean_sea_level:
		// a mean over a period long enough to remove the tides; the others
		// the geoid, an ellipsoid or a chart datum). long_name and comment
		// say what is stored (CF-1.8 §3.2, §3.3).
		text(n.Eta, "long_name", "sea-surface elevation above the mean water level of the record, positive up"),
		text(n.Eta, "comment", "Elevation relative to the mean of this record over its grid, not to a datum such as mean sea level; no CF standard name describes this quantity, so none is given."),
		text(n.Eta, "units", "m"),
		text(n.Eta, "coverage_content_type", "physicalMeasurement"),
	}
	var latlon []float64 // lat then lon, (y, x) order
	if g := opt.Georef; g != nil && g.Placed() {
		latlon = make([]float64, 2*grid.Ny()*grid.Nx())
		c := grid.Ny() * grid.Nx()
		for iy, y := range grid.Y {
			for ix, x := range grid.X {
				latlon[iy*grid.Nx()+ix], latlon[c+iy*grid.Nx()+ix] = g.LatLon(x, y)
			}
		}
		// Latitude and longitude of every cell as auxiliary coordinates
		// (CF-1.8 §5.2), and the WGS 84 datum they refer to as a
		// latitude_longitude grid mapping bound to them (§5.6, the form
		// "mapping: coordinates").
		steps = append(steps,
			func() error { return w.DefVar("lat", netcdf.Float64, []string{n.Y, n.X}) },
			text("lat", "standard_name", "latitude"),
			text("lat", "long_name", "latitude of the cell centre"),
			text("lat", "units", "degrees_north"),
			func() error { return w.DefVar("lon", netcdf.Float64, []string{n.Y, n.X}) },
			text("lon", "standard_name", "longitude"),
			text("lon", "long_name", "longitude of the cell centre"),
			text("lon", "units", "degrees_east"),
			func() error { return w.DefVar("crs", netcdf.Int32, nil) },
			text("crs", "grid_mapping_name", "latitude_longitude"),
			func() error { return w.PutAttFloat64("crs", "semi_major_axis", wgs84A) },
			func() error { return w.PutAttFloat64("crs", "inverse_flattening", wgs84InvF) },
			func() error { return w.PutAttFloat64("crs", "longitude_of_prime_meridian", 0) },
			text("crs", "long_name", "WGS 84 datum of lat and lon"),
			text(n.Eta, "coordinates", "lat lon"),
			text(n.Eta, "grid_mapping", "crs: lat lon"),
		)
	}
	if ew.counts {
		steps = append(steps,
			func() error { return w.DefVar(PointCountVariable, netcdf.Int32, ds) },
			func() error { return w.SetChunks(PointCountVariable, []int{1, grid.Ny(), grid.Nx()}) },
			func() error { return w.SetDeflate(PointCountVariable, level, true) },
			text(PointCountVariable, "long_name", "number of points averaged into the cell's elevation"),
			text(PointCountVariable, "units", "1"),
			text(PointCountVariable, "coverage_content_type", "qualityInformation"),
			text(n.Eta, "ancillary_variables", PointCountVariable),
		)
	}
	if ew.withFoam {
		steps = append(steps,
			func() error { return w.DefVar(n.Foam, netcdf.Uint8, ds) },
			func() error { return w.SetChunks(n.Foam, []int{1, grid.Ny(), grid.Nx()}) },
			func() error { return w.SetDeflate(n.Foam, level, false) },
			text(n.Foam, "long_name", "whitecap foam mask"),
			// Flags (CF-1.8 §3.5): values of the variable's type, one
			// meaning per value.
			func() error { return w.PutAtt(n.Foam, "flag_values", netcdf.Uint8, 0, 1) },
			text(n.Foam, "flag_meanings", "water whitecap"),
			func() error { return w.PutAtt(n.Foam, "valid_range", netcdf.Uint8, 0, 1) },
			text(n.Foam, "coverage_content_type", "thematicClassification"),
		)
		if latlon != nil {
			steps = append(steps, text(n.Foam, "coordinates", "lat lon"), text(n.Foam, "grid_mapping", "crs: lat lon"))
		}
	}
	// Global attributes (CF-1.8 §2.6; ACDD-1.3): conventions and discovery
	// first, then the caller's (sorted, for a reproducible header), then
	// the numbers.
	attrs := maps.Clone(opt.Attrs)
	if attrs == nil {
		attrs = map[string]string{}
	}
	if attrs["source"] == "" {
		attrs["source"] = "crestspeed"
	}
	hist := created.Format(time.RFC3339) + " crestspeed: elevation maps written"
	if h := strings.TrimRight(attrs["history"], "\n"); h != "" {
		hist = h + "\n" + hist
	}
	attrs["history"] = hist
	title := opt.Title
	if title == "" {
		title = "Sea-surface elevation maps"
	}
	summary := opt.Summary
	if summary == "" {
		summary = fmt.Sprintf("Maps of the sea-surface elevation about the record's mean water level on a regular horizontal grid of %d x %d cells of %g m x %g m, one map per instant.",
			grid.Nx(), grid.Ny(), grid.Dx(), grid.Dy())
	}
	steps = append(steps,
		text("", "Conventions", "CF-1.8, ACDD-1.3"),
		text("", "title", title),
		text("", "summary", summary),
		text("", "keywords", "sea surface elevation, ocean waves, wave crests"),
		text("", "cdm_data_type", "Grid"),
		text("", "standard_name_vocabulary", "CF Standard Name Table"),
		text("", "date_created", created.Format(time.RFC3339)),
	)
	if opt.Platform != "" {
		steps = append(steps, text("", "platform", opt.Platform))
	}
	for _, k := range slices.Sorted(maps.Keys(attrs)) {
		if reservedAttrs[k] {
			continue
		}
		steps = append(steps, text("", k, attrs[k]))
	}
	steps = append(steps,
		func() error { return w.PutAttFloat64("", "water_depth_m", opt.DepthM) },
		text("", "water_depth_comment", "water_depth_m is the still-water depth in metres; 0 or less means deep water"),
		func() error { return w.PutAttFloat64("", "grid_spacing_m", grid.Dx()) },
	)
	if grid.Dy() != grid.Dx() {
		steps = append(steps, func() error { return w.PutAttFloat64("", "grid_spacing_y_m", grid.Dy()) })
	}
	for _, k := range slices.Sorted(maps.Keys(opt.NumAttrs)) {
		if reservedAttrs[k] {
			continue
		}
		v := opt.NumAttrs[k]
		steps = append(steps, func() error { return w.PutAttFloat64("", k, v) })
	}
	if g := opt.Georef; g != nil {
		steps = append(steps, headingAttrs(w, g)...)
		if g.Placed() {
			steps = append(steps, geoAttrs(w, g, grid, latlon)...)
		}
	}
	steps = append(steps,
		w.EndDef,
		func() error { return w.PutFloat64(n.Y, grid.Y) },
		func() error { return w.PutFloat64(n.X, grid.X) },
	)
	if latlon != nil {
		c := grid.Ny() * grid.Nx()
		steps = append(steps,
			func() error { return w.PutFloat64("lat", latlon[:c]) },
			func() error { return w.PutFloat64("lon", latlon[c:]) },
		)
	}
	for _, st := range steps {
		if err := st(); err != nil {
			return err
		}
	}
	return nil
}

// geoAttrs returns the steps that write the ACDD geospatial attributes of
// a georeferenced grid: the extremes of the cells' latitudes and longitudes
// and the outline through the four corner cells.
func geoAttrs(w *netcdf.Writer, g *Georef, grid Grid, latlon []float64) []func() error {
	c := len(latlon) / 2
	lat, lon := latlon[:c], latlon[c:]
	num := func(name string, v float64) func() error {
		return func() error { return w.PutAttFloat64("", name, v) }
	}
	nx, ny := grid.Nx(), grid.Ny()
	corners := []int{0, nx - 1, ny*nx - 1, (ny - 1) * nx, 0}
	var pts []string
	for _, i := range corners {
		pts = append(pts, strconv.FormatFloat(lat[i], 'f', 7, 64)+" "+strconv.FormatFloat(lon[i], 'f', 7, 64))
	}
	return []func() error{
		num("geospatial_lat_min", slices.Min(lat)),
		num("geospatial_lat_max", slices.Max(lat)),
		func() error { return w.PutAttText("", "geospatial_lat_units", "degrees_north") },
		num("geospatial_lon_min", slices.Min(lon)),
		num("geospatial_lon_max", slices.Max(lon)),
		func() error { return w.PutAttText("", "geospatial_lon_units", "degrees_east") },
		func() error { return w.PutAttText("", "geospatial_bounds", "POLYGON (("+strings.Join(pts, ", ")+"))") },
		func() error { return w.PutAttText("", "geospatial_bounds_crs", "EPSG:4326") },
		num("grid_origin_latitude_deg", g.LatDeg),
		num("grid_origin_longitude_deg", g.LonDeg),
	}
}

// headingAttrs returns the steps that write the bearing of the grid's axes.
func headingAttrs(w *netcdf.Writer, g *Georef) []func() error {
	return []func() error{
		func() error { return w.PutAttFloat64("", "grid_heading_deg", g.HeadingDeg) },
		func() error {
			return w.PutAttText("", "grid_heading_comment", "grid_heading_deg is the bearing of the grid's +x axis in degrees clockwise from true north; +y points 90 degrees anticlockwise from +x")
		},
	}
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
	if ew.n == 0 {
		ew.first = t
	} else if len(ew.steps) < 4096 {
		ew.steps = append(ew.steps, t-ew.last)
	}
	ew.n++
	ew.last = t
	return nil
}

// isoDuration writes seconds as an ISO 8601 duration ("PT12.5S").
func isoDuration(s float64) string {
	return "PT" + strconv.FormatFloat(s, 'f', -1, 64) + "S"
}

// coverage writes the ACDD time coverage of the frames written: start and
// end as ISO 8601 instants when the time units name a reference instant,
// the duration and the median step.
func (ew *ElevationWriter) coverage() error {
	w := ew.w
	if err := w.ReDef(); err != nil {
		return err
	}
	if ref, ok := timeReference(ew.units); ok {
		at := func(s float64) string {
			return ref.Add(time.Duration(math.Round(s * 1e9))).UTC().Format("2006-01-02T15:04:05.999999999Z07:00")
		}
		if err := w.PutAttText("", "time_coverage_start", at(ew.first)); err != nil {
			return err
		}
		if err := w.PutAttText("", "time_coverage_end", at(ew.last)); err != nil {
			return err
		}
	}
	if err := w.PutAttText("", "time_coverage_duration", isoDuration(ew.last-ew.first)); err != nil {
		return err
	}
	if len(ew.steps) > 0 {
		s := slices.Clone(ew.steps)
		if err := w.PutAttText("", "time_coverage_resolution", isoDuration(quantileMid(s))); err != nil {
			return err
		}
	}
	return w.EndDef()
}

// Commit writes the time coverage, finishes the file and moves it to its
// final path. At least one frame must have been written.
func (ew *ElevationWriter) Commit() error {
	if ew.w == nil {
		return fmt.Errorf("ingest: %s: writer already committed or aborted", ew.path)
	}
	if ew.n == 0 {
		ew.Abort()
		return fmt.Errorf("ingest: %s: no frames were written; nothing to commit", ew.path)
	}
	if err := ew.coverage(); err != nil {
		ew.Abort()
		return fmt.Errorf("ingest: %w", err)
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
