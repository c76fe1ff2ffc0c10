package ingest

// In-situ elevation series: a wave gauge, a buoy's heave, or a pressure
// record already converted to surface elevation, read to be compared with
// the maps at the instrument's position.

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"crestspeed/internal/netcdf"
)

// GaugeSeries is an elevation time series at one point.
type GaugeSeries struct {
	Path string
	// Times in seconds, increasing; with Origin known they count from it,
	// otherwise they are on the same time base as the maps they are
	// compared with (the file's time_s column).
	Times []float64
	// Eta is the elevation in metres (NaN where unknown).
	Eta []float64
	// Origin is the UTC instant of time 0, zero when the file gives only
	// relative times.
	Origin time.Time
}

// maxGaugeSamples bounds the length of a series read (about three days at
// 10 Hz).
const maxGaugeSamples = 3_000_000

// ReadGauge reads a gauge series from a CSV file (a header naming a time
// column — time_s, seconds on the maps' time base, or utc, ISO 8601
// instants — and an elevation column eta_m, eta or elevation_m; other
// columns ignored) or from a CF NetCDF file (a variable of one dimension,
// time, chosen by name, else by a CF sea-surface elevation standard_name,
// else eta; its time coordinate's CF units). variable, when not empty,
// names the elevation column or variable. Samples whose time or elevation
// does not parse are skipped and counted in the error only when none is
// left; times must increase.
func ReadGauge(path, variable string) (*GaugeSeries, error) {
	if _, err := os.Stat(path); errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("ingest: gauge file %s does not exist; check the path", path)
	}
	var g *GaugeSeries
	var err error
	switch strings.ToLower(filepath.Ext(path)) {
	case ".nc", ".nc4", ".cdf":
		g, err = readGaugeNetCDF(path, variable)
	default:
		f, oerr := os.Open(path)
		if oerr != nil {
			return nil, fmt.Errorf("ingest: gauge file %s cannot be opened: %w", path, oerr)
		}
		defer f.Close()
		g, err = ReadGaugeCSV(f, path, variable)
	}
	if err != nil {
		return nil, err
	}
	return g, g.check()
}

// ReadGaugeCSV reads a gauge series in CSV form from r (see ReadGauge);
// name is used in messages.
func ReadGaugeCSV(r io.Reader, name, variable string) (*GaugeSeries, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true
	header, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("ingest: gauge file %s has no CSV header (%v); give columns time_s or utc, and eta_m", name, err)
	}
	find := func(names ...string) int {
		for i, h := range header {
			h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
			if slices.Contains(names, h) {
				return i
			}
		}
		return -1
	}
	tcol, ucol := find("time_s", "t_s", "time"), find("utc", "time_utc", "datetime")
	ecol := find("eta_m", "eta", "elevation_m", "elevation", "heave_m")
	if variable != "" {
		ecol = find(strings.ToLower(variable))
	}
	switch {
	case tcol < 0 && ucol < 0:
		return nil, fmt.Errorf("ingest: gauge file %s has no time column; name one time_s (seconds on the maps' time base) or utc (ISO 8601 instants)", name)
	case ecol < 0 && variable != "":
		return nil, fmt.Errorf("ingest: gauge file %s has no column %q (the gauge variable setting)", name, variable)
	case ecol < 0:
		return nil, fmt.Errorf("ingest: gauge file %s has no elevation column; name it eta_m, or give its name as the gauge variable", name)
	}
	g := &GaugeSeries{Path: name}
	skipped, line := 0, 1
	for {
		rec, err := cr.Read()
		line++
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			var pe *csv.ParseError
			if errors.As(err, &pe) && !errors.Is(pe.Err, csv.ErrQuote) && !errors.Is(pe.Err, csv.ErrBareQuote) {
				return nil, fmt.Errorf("ingest: gauge file %s cannot be read at line %d: %v", name, line, pe.Err)
			}
			skipped++
			continue
		}
		if len(g.Times) >= maxGaugeSamples {
			return nil, fmt.Errorf("ingest: gauge file %s has more than %d samples; cut it to the span of the record", name, maxGaugeSamples)
		}
		t, ok := gaugeTime(rec, tcol, ucol, g)
		e, eok := cellFloat(rec, ecol)
		if !ok || !eok {
			skipped++
			continue
		}
		g.Times = append(g.Times, t)
		g.Eta = append(g.Eta, e)
	}
	if len(g.Times) == 0 {
		return nil, fmt.Errorf("ingest: gauge file %s has no readable sample (%d rows skipped)", name, skipped)
	}
	return g, nil
}

// gaugeTime reads the time of a CSV row: time_s, or utc relative to the
// first utc instant seen (which becomes the series' origin).
func gaugeTime(rec []string, tcol, ucol int, g *GaugeSeries) (float64, bool) {
	if tcol >= 0 {
		return cellFloat(rec, tcol)
	}
	if ucol >= len(rec) {
		return 0, false
	}
	u, err := ParseInstant(rec[ucol])
	if err != nil {
		return 0, false
	}
	if g.Origin.IsZero() {
		g.Origin = u.Truncate(time.Second)
	}
	return u.Sub(g.Origin).Seconds(), true
}

// cellFloat parses a finite number in column i (an empty or NaN cell is
// not one; an elevation cell "NaN" is taken as an unknown sample).
func cellFloat(rec []string, i int) (float64, bool) {
	if i < 0 || i >= len(rec) {
		return 0, false
	}
	v, err := strconv.ParseFloat(strings.TrimSpace(rec[i]), 64)
	if err != nil || math.IsInf(v, 0) {
		return 0, false
	}
	return v, true
}

// readGaugeNetCDF reads a CF time series.
func readGaugeNetCDF(path, variable string) (*GaugeSeries, error) {
	f, err := netcdf.Open(path)
	if err != nil {
		return nil, fmt.Errorf("ingest: gauge file %s cannot be opened as NetCDF: %w", path, err)
	}
	defer f.Close()
	vars, err := f.Vars()
	if err != nil {
		return nil, fmt.Errorf("ingest: gauge file %s: %w", path, err)
	}
	name := variable
	if name == "" {
		for _, v := range vars {
			sn, _, _ := f.AttText(v, "standard_name")
			if slices.Contains(ElevationStandardNames, sn) {
				name = v
				break
			}
		}
	}
	if name == "" && slices.Contains(vars, "eta") {
		name = "eta"
	}
	if name == "" || !f.HasVar(name) {
		return nil, fmt.Errorf("ingest: gauge file %s has no elevation variable (looked for %q, a CF sea-surface elevation standard_name, and eta among %v); give its name as the gauge variable", path, variable, vars)
	}
	dims, err := f.VarDims(name)
	if err != nil || len(dims) != 1 {
		return nil, fmt.Errorf("ingest: gauge variable %q of %s must have one dimension (time), it has %v", name, path, dims)
	}
	eta, err := f.ReadFloat64(name)
	if err != nil {
		return nil, fmt.Errorf("ingest: gauge file %s: %w", path, err)
	}
	fill, _, hasFill, _ := f.FillValue(name)
	tname := dims[0]
	times, err := f.ReadFloat64(tname)
	if err != nil {
		return nil, fmt.Errorf("ingest: gauge file %s has no time coordinate %q: %w", path, tname, err)
	}
	units, _, _ := f.AttText(tname, "units")
	g := &GaugeSeries{Path: path, Times: times, Eta: eta}
	if units != "" {
		factor, ref, err := parseTimeUnits(units)
		if err != nil {
			return nil, fmt.Errorf("ingest: gauge file %s: time units %q %v", path, units, err)
		}
		for i := range g.Times {
			g.Times[i] *= factor
		}
		if ref = strings.TrimSpace(strings.TrimPrefix(strings.TrimSpace(ref), "since")); ref != "" {
			if o, err := ParseInstant(ref); err == nil {
				g.Origin = o
			}
		}
	}
	for i, v := range g.Eta {
		if (hasFill && v == fill) || math.IsInf(v, 0) {
			g.Eta[i] = math.NaN()
		}
	}
	return g, nil
}

// check refuses a series that cannot be compared.
func (g *GaugeSeries) check() error {
	if len(g.Times) < 16 {
		return fmt.Errorf("ingest: gauge file %s has %d samples; a spectrum needs at least 16", g.Path, len(g.Times))
	}
	for i := 1; i < len(g.Times); i++ {
		if !(g.Times[i] > g.Times[i-1]) {
			return fmt.Errorf("ingest: gauge file %s: times do not increase at sample %d (%g s after %g s); sort the series", g.Path, i, g.Times[i], g.Times[i-1])
		}
	}
	return nil
}

// Shifted returns the series' times on a time base whose zero is the
// instant origin (when both the series and the caller know absolute
// time); otherwise the times as they are.
func (g *GaugeSeries) Shifted(origin time.Time) []float64 {
	if g.Origin.IsZero() || origin.IsZero() {
		return g.Times
	}
	d := g.Origin.Sub(origin).Seconds()
	out := make([]float64, len(g.Times))
	for i, t := range g.Times {
		out[i] = t + d
	}
	return out
}

// TimeOriginOf returns the reference instant of CF time units ("seconds
// since 2026-06-14T09:00:00Z"), zero when the units name none.
func TimeOriginOf(units string) time.Time {
	_, ref, err := parseTimeUnits(units)
	if err != nil {
		return time.Time{}
	}
	ref = strings.TrimSpace(strings.TrimPrefix(strings.TrimSpace(ref), "since"))
	o, err := ParseInstant(ref)
	if err != nil {
		return time.Time{}
	}
	return o
}
