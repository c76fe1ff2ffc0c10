package ingest

import (
	"crestspeed/internal/selectk"
	"math"
	"slices"

	"crestspeed/internal/netcdf"
)

// Masking and unpacking. Every test is done on the values as stored (the
// packed values of CF packed data), as CF-1.8 §2.5.1 and §8.1 ask for
// _FillValue, missing_value and valid_range: the elevation bound and the
// spike limits, which are in metres, are turned into bounds on the stored
// values first, so that a cell costs a few comparisons and, when packed, one
// multiply and add.

// maskParams hold what the masking of one variable needs.
type maskParams struct {
	kind rawKind // how stored values are held (see plan)
	// Unpacking: metres = stored*scale + offset (CF-1.8 §8.1, with the
	// units' factor to metres folded in); identity skips it.
	scale, offset float64
	identity      bool

	hasFill, hasMiss bool
	fill, miss       float64   // in stored units
	moreMiss         []float64 // further missing_value entries

	validLo, validHi float64 // valid range in stored units (±MaxFloat64: none)
	boundLo, boundHi float64 // elevation bound in stored units

	spike            bool
	spikeK, spikeMin float64 // robust deviations; metres
	nx               int     // grid width, for the sampling stride
	samples          []float64

	foamFill    uint8
	hasFoamFill bool
}

// maskSetup reads the packing, fill, missing and valid-range attributes of
// the elevation variable and turns the plausibility settings into bounds
// on the stored values.
func (s *ElevationSource) maskSetup(typ netcdf.Type, unit float64) error {
	f, name, p := s.f, s.names.Eta, &s.mp
	scale, hasScale, err := s.eltAtt("scale_factor", 1)
	if err != nil {
		return err
	}
	if scale == 0 {
		return s.errorf("attribute scale_factor of %q is 0, which would make every elevation the same; fix the attribute", name)
	}
	offset, hasOffset, err := s.eltAtt("add_offset", 0)
	if err != nil {
		return err
	}
	packed := hasScale || hasOffset
	p.scale, p.offset = scale*unit, offset*unit
	p.identity = p.scale == 1 && p.offset == 0
	switch typ {
	case netcdf.Int32, netcdf.Uint32, netcdf.Int64, netcdf.Uint64:
		p.kind = rawF64 // float32 cannot hold every stored value
	case netcdf.Float64:
		if !p.identity {
			p.kind = rawF64
		}
	}

	// Fill and missing values are compared with the stored values.
	if fv, _, ok, err := f.FillValue(name); err != nil {
		return s.errorf("cannot read the fill value of %q: %v", name, err)
	} else if ok {
		p.fill, p.hasFill = p.stored(fv), true
	}
	if mv, ok, err := f.AttFloat64s(name, "missing_value"); err != nil {
		return s.errorf("cannot read missing_value of %q: %v", name, err)
	} else if ok && len(mv) > 0 {
		p.miss, p.hasMiss = p.stored(mv[0]), true
		for _, v := range mv[1:] {
			p.moreMiss = append(p.moreMiss, p.stored(v))
		}
	}

	// valid_range, or valid_min and valid_max (CF-1.8 §2.5.1). They are
	// in stored units (§8.1: of the packed type). A packed variable whose
	// valid bounds have the type of scale_factor instead, not its own,
	// states them in unpacked units; they are converted.
	p.validLo, p.validHi = -math.MaxFloat64, math.MaxFloat64
	scaleType, _, _, _ := f.AttInfo(name, "scale_factor")
	unpackedUnits := func(att string) bool {
		at, _, _, _ := f.AttInfo(name, att)
		return packed && at != typ && at == scaleType
	}
	toStored := func(v float64, att string) float64 {
		if unpackedUnits(att) {
			return (v - offset) / scale
		}
		return v
	}
	if vr, ok, err := f.AttFloat64s(name, "valid_range"); err != nil {
		return s.errorf("cannot read valid_range of %q: %v", name, err)
	} else if ok {
		if len(vr) != 2 || !(vr[0] <= vr[1]) {
			return s.errorf("attribute valid_range of %q must hold two numbers, the smallest and largest valid value (CF-1.8 §2.5.1); it holds %v", name, vr)
		}
		p.validLo, p.validHi = toStored(vr[0], "valid_range"), toStored(vr[1], "valid_range")
	} else {
		if v, ok, err := s.eltAtt("valid_min", 0); err != nil {
			return err
		} else if ok {
			p.validLo = toStored(v, "valid_min")
		}
		if v, ok, err := s.eltAtt("valid_max", 0); err != nil {
			return err
		} else if ok {
			p.validHi = toStored(v, "valid_max")
		}
	}
	if p.validLo > p.validHi {
		p.validLo, p.validHi = p.validHi, p.validLo // a negative scale_factor turned them round
	}
	s.fillBoundsValid(typ)

	// Plausibility in metres, as bounds on stored values.
	p.boundLo, p.boundHi = -math.MaxFloat64, math.MaxFloat64
	if b := s.opt.MaxAbsElevationM; b > 0 {
		p.boundLo, p.boundHi = p.toStoredRange(-b, b)
	}
	p.spike = s.opt.SpikeFactor > 0
	p.spikeK, p.spikeMin = s.opt.SpikeFactor, s.opt.SpikeMinM
	return nil
}

// eltAtt reads the single finite number of attribute att of the elevation
// variable, or def (and false) when the attribute is absent.
func (s *ElevationSource) eltAtt(att string, def float64) (float64, bool, error) {
	f, name := s.f, s.names.Eta
	_, n, ok, err := f.AttInfo(name, att)
	if err != nil || !ok {
		return def, false, err
	}
	v, _, err := f.AttFloat64(name, att)
	if err != nil {
		return def, false, s.errorf("attribute %s of %q: %v", att, name, err)
	}
	if n != 1 || math.IsNaN(v) || math.IsInf(v, 0) {
		return def, false, s.errorf("attribute %s of %q must be one finite number (CF-1.8 §8.1); it has %d value(s), the first %g", att, name, n, v)
	}
	return v, true, nil
}

// fillBoundsValid narrows the valid range by the fill value when the
// variable has no valid_* attributes.
func (s *ElevationSource) fillBoundsValid(typ netcdf.Type) {
	f, name, p := s.f, s.names.Eta, &s.mp
	// Without valid_* attributes the fill value bounds the valid range
	// (NetCDF User's Guide, appendix A, valid_range: a positive fill is a
	// valid maximum, otherwise a valid minimum), except for bytes without
	// an explicit fill.
	if _, _, hasVR, _ := f.AttInfo(name, "valid_range"); !hasVR && p.hasFill && !math.IsNaN(p.fill) {
		_, _, hasMin, _ := f.AttInfo(name, "valid_min")
		_, _, hasMax, _ := f.AttInfo(name, "valid_max")
		_, _, explicit, _ := f.AttInfo(name, "_FillValue")
		isByte := typ == netcdf.Int8 || typ == netcdf.Uint8
		if !hasMin && !hasMax && (explicit || !isByte) {
			if p.fill > 0 {
				p.validHi = p.fill
			} else {
				p.validLo = p.fill
			}
		}
	}
}

// stored rounds a value given in the file's attributes to the precision of
// the stored values as tested (float32 unless the kind is wide).
func (p *maskParams) stored(v float64) float64 {
	if p.kind.wide() {
		return v
	}
	return float64(float32(v))
}

// toStoredRange turns an interval of elevations in metres into the
// interval of stored values that unpack into it.
func (p *maskParams) toStoredRange(lo, hi float64) (float64, float64) {
	a, b := (lo-p.offset)/p.scale, (hi-p.offset)/p.scale
	if a > b {
		a, b = b, a
	}
	return a, b
}

// unpack turns a stored value into metres. The conversion in the middle
// keeps the multiply and the add rounded apart (no fused multiply-add), as
// netCDF4-python and xarray compute them.
func (p *maskParams) unpack(v float64) float64 {
	return float64(v*p.scale) + p.offset
}

// frame masks and unpacks frame i of blk into eta and valid and returns
// the number of known cells; counts receives the cells masked by reason
// (valid range, bound, spike).
func (p *maskParams) frame(blk *block, i int, eta []float32, valid []bool, counts *[3]int64) int {
	c := len(eta)
	var b []byte
	var f32 []float32
	var f64 []float64
	switch p.kind {
	case rawF32:
		f32 = blk.raw32[i*c : (i+1)*c]
	case rawF64:
		f64 = blk.raw64[i*c : (i+1)*c]
	default:
		sz := p.kind.size()
		b = blk.rawB[i*c*sz : (i+1)*c*sz]
	}
	lo := max(p.validLo, p.boundLo)
	hi := min(p.validHi, p.boundHi)
	if p.spike {
		if m, thr, ok := p.spikeLimits(b, f32, f64, c); ok {
			a, z := p.toStoredRange(m-thr, m+thr)
			lo, hi = max(lo, a), min(hi, z)
		}
	}
	if p.kind.wide() {
		lo, hi = inward[float64](lo, hi)
	} else {
		l, h := inward[float32](lo, hi)
		lo, hi = float64(l), float64(h)
	}
	n := kernel(p.kind, b, f32, f64, eta, valid, lo, hi, p.hasFill, p.fill, p.hasMiss, p.miss, p.identity, p.scale, p.offset)
	if n < c {
		for j, ok := range valid {
			if !ok {
				p.classify(p.kind.at(b, f32, f64, j), counts)
			}
		}
	}
	if len(p.moreMiss) > 0 {
		nan := float32(math.NaN())
		for j, ok := range valid {
			if ok && slices.Contains(p.moreMiss, p.kind.at(b, f32, f64, j)) {
				eta[j], valid[j] = nan, false
				n--
			}
		}
	}
	return n
}

// foamFrame copies frame i's foam mask into dst, fill values as water.
func (p *maskParams) foamFrame(blk *block, i int, dst []uint8) {
	c := len(dst)
	copy(dst, blk.foam[i*c:(i+1)*c])
	if p.hasFoamFill {
		for j, v := range dst {
			if v == p.foamFill {
				dst[j] = 0
			}
		}
	}
}

// inward returns the bounds [lo, hi] as values of type T that admit
// exactly the values of T inside [lo, hi], finite.
func inward[T float32 | float64](lo, hi float64) (T, T) {
	var t T
	if _, is32 := any(t).(float32); is32 {
		lo = max(lo, -math.MaxFloat32)
		hi = min(hi, math.MaxFloat32)
		l, h := float32(lo), float32(hi)
		if float64(l) < lo {
			l = math.Nextafter32(l, float32(math.Inf(1)))
		}
		if float64(h) > hi {
			h = math.Nextafter32(h, float32(math.Inf(-1)))
		}
		return T(l), T(h)
	}
	return T(lo), T(hi)
}

// classify counts a rejected stored value by the first test it fails;
// values the file marks unknown (NaN, ±Inf, fill, missing) are not counted.
func (p *maskParams) classify(r float64, counts *[3]int64) {
	switch {
	case math.IsNaN(r) || math.IsInf(r, 0) || (p.hasFill && r == p.fill) || (p.hasMiss && r == p.miss):
	case r < p.validLo || r > p.validHi:
		counts[0]++
	case r < p.boundLo || r > p.boundHi:
		counts[1]++
	default:
		counts[2]++
	}
}

// Spike test sampling: at most spikeSamples cells, and no test on fewer
// than spikeMinSamples known ones.
const (
	spikeSamples    = 1024
	spikeMinSamples = 64
)

// spikeLimits returns the median of a frame and the spike threshold, in
// metres, estimated from a deterministic sample of its cells that pass the
// other tests: threshold = max(k·1.4826·MAD, SpikeMinM), where 1.4826·MAD
// is the robust estimate of the standard deviation of a Gaussian sample
// (Rousseeuw & Croux 1993, J. Am. Stat. Assoc. 88, 1273). The stride is
// coprime with the grid width so that the sample walks across columns.
func (p *maskParams) spikeLimits(b []byte, f32 []float32, f64 []float64, n int) (median, thr float64, ok bool) {
	step := max(1, n/spikeSamples)
	for p.nx > 1 && gcd(step, p.nx) != 1 {
		step++
	}
	lo, hi := max(p.validLo, p.boundLo), min(p.validHi, p.boundHi)
	sm := p.samples[:0]
	for i := step / 2; i < n; i += step {
		r := p.kind.at(b, f32, f64, i)
		if !(r >= lo && r <= hi) || (p.hasFill && r == p.fill) || (p.hasMiss && r == p.miss) {
			continue
		}
		sm = append(sm, p.unpack(r))
	}
	p.samples = sm
	if len(sm) < spikeMinSamples {
		return 0, 0, false
	}
	median = quantileMid(sm)
	for i, v := range sm {
		sm[i] = math.Abs(v - median)
	}
	mad := quantileMid(sm)
	return median, max(p.spikeK*1.4826*mad, p.spikeMin), true
}

func gcd(a, b int) int {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

// quantileMid returns the median of v (the lower middle element for an
// even count), reordering v, in linear expected time.
func quantileMid(v []float64) float64 {
	return selectk.Kth(v, (len(v)-1)/2)
}
