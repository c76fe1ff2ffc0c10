package ingest

import (
	"fmt"
	"math"
	"slices"
	"strings"
)

// ElevationStandardNames are the CF standard names (CF standard name table,
// with the aliases it lists) under which an elevation-map file may store the
// sea-surface elevation, in the order of preference used when no variable
// is named in the settings.
var ElevationStandardNames = []string{
	"sea_surface_height_above_mean_sea_level",
	"sea_surface_height_above_sea_level",
	"sea_surface_height", // alias of sea_surface_height_above_sea_level
	"sea_surface_elevation",
	"sea_surface_elevation_anomaly", // both aliases of sea_surface_height_above_geoid
	"sea_surface_height_above_geoid",
	"sea_surface_height_above_geopotential_datum",
	"sea_surface_height_above_reference_ellipsoid",
}

// Axis roles of the elevation variable's dimensions.
const (
	axisT = iota
	axisY
	axisX
)

var axisNames = [3]string{"time", "y", "x"}

// settingFor names the setting that fixes the dimension of each role.
var settingFor = [3]string{"time_dimension", "y_dimension", "x_dimension"}

// chooseVariable finds the elevation variable: the configured name, else
// the one variable with an elevation standard_name, else "eta". When
// nothing matches, the error names the setting and the candidates.
func (s *ElevationSource) chooseVariable(want string) (string, error) {
	f := s.f
	vars, err := f.Vars()
	if err != nil {
		return "", s.errorf("cannot list the variables: %v", err)
	}
	var candidates []string // variables of three or more dimensions
	for _, v := range vars {
		if dims, err := f.VarDims(v); err == nil && len(dims) >= 3 {
			candidates = append(candidates, v)
		}
	}
	list := "none has three dimensions"
	if len(candidates) > 0 {
		list = "variables of three dimensions: " + strings.Join(candidates, ", ")
	}
	if want != "" {
		if !f.HasVar(want) {
			return "", s.errorf("has no variable %q (the setting %s); set it to the elevation variable (%s)", want, settingVariable, list)
		}
		return want, nil
	}
	var byStd []string
	rank := len(ElevationStandardNames)
	for _, v := range vars {
		sn, ok, _ := f.AttText(v, "standard_name")
		if !ok {
			continue
		}
		sn = strings.TrimSpace(sn)
		if i := slices.Index(ElevationStandardNames, sn); i >= 0 {
			switch {
			case i < rank:
				rank, byStd = i, []string{v}
			case i == rank:
				byStd = append(byStd, v)
			}
		}
	}
	switch len(byStd) {
	case 1:
		return byStd[0], nil
	case 0:
	default:
		if slices.Contains(byStd, DefaultNames().Eta) {
			return DefaultNames().Eta, nil
		}
		return "", s.errorf("has several variables with standard_name %s (%s); set %s to the one that holds the elevation maps",
			ElevationStandardNames[rank], strings.Join(byStd, ", "), settingVariable)
	}
	if f.HasVar(DefaultNames().Eta) {
		return DefaultNames().Eta, nil
	}
	return "", s.errorf("has no elevation variable: none is named %q and none has a sea-surface height standard_name (%s); set %s to the variable that holds the elevation maps (%s)",
		DefaultNames().Eta, ElevationStandardNames[0], settingVariable, list)
}

// coordInfo describes the coordinate variable found for a dimension.
type coordInfo struct {
	name string // variable name, "" when none
	axis string // CF axis attribute, upper case, "" when none
	std  string // standard_name
	time bool   // units of the form "<unit> since <date>" (CF time)
}

// coordFor returns the 1-D coordinate variable of dimension dim: the
// variable of that name over (dim) (a CF coordinate variable), else the
// only 1-D variable over (dim) with an axis or coordinate standard_name.
func (s *ElevationSource) coordFor(dim string) coordInfo {
	f := s.f
	inspect := func(v string) coordInfo {
		c := coordInfo{name: v}
		if a, ok, _ := f.AttText(v, "axis"); ok {
			c.axis = strings.ToUpper(strings.TrimSpace(a))
		}
		if sn, ok, _ := f.AttText(v, "standard_name"); ok {
			c.std = strings.TrimSpace(sn)
		}
		if u, ok, _ := f.AttText(v, "units"); ok {
			c.time = strings.Contains(strings.ToLower(u), " since ")
		}
		return c
	}
	if f.HasVar(dim) {
		if d, err := f.VarDims(dim); err == nil && len(d) == 1 && d[0] == dim {
			return inspect(dim)
		}
	}
	vars, _ := f.Vars()
	var found []coordInfo
	for _, v := range vars {
		if d, err := f.VarDims(v); err != nil || len(d) != 1 || d[0] != dim {
			continue
		}
		if c := inspect(v); c.axis != "" || roleOfStd(c.std) >= 0 || c.time {
			found = append(found, c)
		}
	}
	if len(found) == 1 {
		return found[0]
	}
	return coordInfo{}
}

// roleOfStd maps a coordinate standard_name to an axis role, or -1.
func roleOfStd(std string) int {
	switch std {
	case "time":
		return axisT
	case "projection_x_coordinate", "grid_longitude":
		return axisX
	case "projection_y_coordinate", "grid_latitude":
		return axisY
	}
	return -1
}

// roleOf classifies a dimension by its coordinate variable (CF axis
// attribute, then standard_name, then time units) and, failing that, by
// its name. -1 when nothing says.
func roleOf(dim string, c coordInfo) int {
	switch c.axis {
	case "T":
		return axisT
	case "X":
		return axisX
	case "Y":
		return axisY
	}
	if r := roleOfStd(c.std); r >= 0 {
		return r
	}
	if c.time {
		return axisT
	}
	switch strings.ToLower(dim) {
	case "time", "t":
		return axisT
	case "x":
		return axisX
	case "y":
		return axisY
	}
	return -1
}

// resolveDims assigns the elevation variable's three dimensions to time, y
// and x: from the settings where given, else from their coordinate
// variables (CF axis, standard_name, time units) or names, and finally, for
// one spatial pair without 1-D coordinates, from 2-D coordinate arrays. It
// returns for each role the index of the dimension in the variable.
func (s *ElevationSource) resolveDims(dims []string, opt ElevationOptions) ([3]int, error) {
	var pos [3]int
	for i := range pos {
		pos[i] = -1
	}
	set := [3]string{opt.TimeDimension, opt.YDimension, opt.XDimension}
	for r, name := range set {
		if name == "" {
			continue
		}
		i := slices.Index(dims, name)
		if i < 0 {
			return pos, s.errorf("variable %q has no dimension %q (the setting %s); its dimensions are (%s)",
				s.names.Eta, name, settingFor[r], strings.Join(dims, ","))
		}
		pos[r] = i
	}
	for i, d := range dims {
		if slices.Contains(pos[:], i) {
			continue
		}
		r := roleOf(d, s.coordFor(d))
		if r < 0 || pos[r] >= 0 {
			continue
		}
		pos[r] = i
	}
	// A single unassigned role takes the single unassigned dimension when
	// 2-D coordinate arrays or elimination leave no doubt.
	var missing []int
	for r := range pos {
		if pos[r] < 0 {
			missing = append(missing, r)
		}
	}
	if len(missing) == 2 && missing[0] == axisY && missing[1] == axisX {
		if yi, xi, ok := s.spatialFrom2D(dims, pos[axisT]); ok {
			pos[axisY], pos[axisX] = yi, xi
			missing = nil
		}
	}
	if len(missing) == 1 {
		for i := range dims {
			if !slices.Contains(pos[:], i) {
				pos[missing[0]] = i
			}
		}
		missing = nil
	}
	if len(missing) > 0 {
		var roles, sets []string
		for _, r := range missing {
			roles = append(roles, axisNames[r])
			sets = append(sets, settingFor[r])
		}
		return pos, s.errorf("cannot tell which dimension of %q (%s) is %s: no coordinate variable has a CF axis or standard_name that says so; set %s to the dimension names",
			s.names.Eta, strings.Join(dims, ","), strings.Join(roles, " and which "), strings.Join(sets, " and "))
	}
	return pos, nil
}

// coords2D finds the 2-D coordinate arrays of the spatial dimensions a and
// b: variables over (a,b) or (b,a) marked as x or y by their CF axis or
// standard_name, or named x or y; those listed in the elevation variable's
// coordinates attribute come first.
func (s *ElevationSource) coords2D(a, b string) (xv, yv string) {
	f := s.f
	listed, _, _ := f.AttText(s.names.Eta, "coordinates")
	vars, _ := f.Vars()
	order := append(slices.Clone(strings.Fields(listed)), vars...)
	for _, v := range order {
		if !f.HasVar(v) {
			continue
		}
		d, err := f.VarDims(v)
		if err != nil || len(d) != 2 || !((d[0] == a && d[1] == b) || (d[0] == b && d[1] == a)) {
			continue
		}
		axis, _, _ := f.AttText(v, "axis")
		std, _, _ := f.AttText(v, "standard_name")
		axis, std = strings.ToUpper(strings.TrimSpace(axis)), strings.TrimSpace(std)
		r := -1
		switch {
		case axis == "X" || std == "projection_x_coordinate":
			r = axisX
		case axis == "Y" || std == "projection_y_coordinate":
			r = axisY
		case strings.EqualFold(v, "x"):
			r = axisX
		case strings.EqualFold(v, "y"):
			r = axisY
		}
		switch {
		case r == axisX && xv == "":
			xv = v
		case r == axisY && yv == "":
			yv = v
		}
	}
	return xv, yv
}

// spatialFrom2D decides which of the two non-time dimensions is x and
// which y from 2-D coordinate arrays: x varies along the x dimension.
func (s *ElevationSource) spatialFrom2D(dims []string, ti int) (yi, xi int, ok bool) {
	var sp []int
	for i := range dims {
		if i != ti {
			sp = append(sp, i)
		}
	}
	if ti < 0 || len(sp) != 2 {
		return 0, 0, false
	}
	a, b := dims[sp[0]], dims[sp[1]]
	xv, _ := s.coords2D(a, b)
	if xv == "" {
		return 0, 0, false
	}
	vd, _ := s.f.VarDims(xv)
	v, err := s.f.ReadFloat64(xv)
	if err != nil || len(vd) != 2 {
		return 0, 0, false
	}
	shape, _ := s.f.VarShape(xv)
	n0, n1 := shape[0], shape[1]
	if n0 < 2 || n1 < 2 {
		return 0, 0, false
	}
	// Spread along the second dimension of xv versus along the first.
	along1 := math.Abs(v[n1-1] - v[0])
	along0 := math.Abs(v[(n0-1)*n1] - v[0])
	xdim := vd[1]
	if along0 > along1 {
		xdim = vd[0]
	}
	if xdim == a {
		return sp[1], sp[0], true
	}
	return sp[0], sp[1], true
}

// regularFrom2D reads the axis of a 2-D coordinate array c (shape n0 x n1,
// in the array's own dimension order) along its first dimension
// (alongFirst) or its second, and checks that the array does not change
// across the other dimension by more than tol of the axis spacing: a
// regular, axis-aligned grid. Whether the axis itself is regular is left to
// checkAxis.
func regularFrom2D(c []float64, n0, n1 int, alongFirst bool, tol float64) ([]float64, error) {
	n, across := n1, n0
	at := func(i, j int) float64 { return c[j*n1+i] } // i along, j across
	if alongFirst {
		n, across = n0, n1
		at = func(i, j int) float64 { return c[i*n1+j] }
	}
	axis := make([]float64, n)
	for i := range n {
		axis[i] = at(i, 0)
	}
	d := math.Abs(spacing(axis))
	for j := 1; j < across; j++ {
		for i := range n {
			if v := at(i, j); !(math.Abs(v-axis[i]) <= tol*d) {
				return nil, fmt.Errorf("does not describe a regular grid: at cell %d of row %d it is %g but %g in the first row, a difference of more than %g of the spacing (a rotated or curvilinear grid); regrid the maps onto a regular x-y grid", i, j, v, axis[i], tol)
			}
		}
	}
	return axis, nil
}
