package table

import (
	"fmt"
	"math"
	"sort"
)

// Precisions of the columns (the precision the values carry; see the
// package documentation).
var (
	precTime     = Fixed(6)       // s: 1 µs
	precPosition = Fixed(3)       // m: 1 mm
	precHeight   = Fixed(4)       // m: 0.1 mm
	precSpeed    = Fixed(3)       // m/s: 1 mm/s
	precArea     = Fixed(4)       // m²: 1 cm²
	precRatio    = Significant(4) // dimensionless ratios, S_c, B_x
	precSpectral = Significant(6) // densities, Λ(c), coverage
	precFreq     = Significant(9) // frequencies and speed-bin edges
)

// Crests is crests.csv: one row per crest tip per frame, the rows of a
// track together and in time order.
var Crests = newSchema("crests.csv", "crest rows", 1,
	count("track_id", "crest track identifier").cf("track_id", ""),
	number("time_s", "s", precTime, "time").required().cf("time", "time"),
	number("x_m", "m", precPosition, "crest tip x position on the analysis grid").cf("x", ""),
	number("y_m", "m", precPosition, "crest tip y position on the analysis grid").cf("y", ""),
	number("crest_elevation_m", "m", precHeight, "crest elevation a_c above the mean water level").cf("crest_elevation", ""),
	number("zero_crossing_width_m", "m", precPosition, "zero-crossing width w_c of the crest along the mean direction").cf("zero_crossing_width", ""),
	number("steepness_sc", "1", precRatio, "local crest steepness S_c = a_c pi / w_c").cf("steepness", ""),
	number("crest_speed_mps", "m s-1", precSpeed, "crest speed c_cr along the mean direction of travel").cf("crest_speed", ""),
	number("phase_speed_peak_mps", "m s-1", precSpeed, "linear phase speed c_p at the spectral peak along the mean direction").cf("phase_speed_peak", ""),
	number("phase_speed_local_mps", "m s-1", precSpeed, "linear phase speed c_loc of the local carrier wave along the mean direction").cf("phase_speed_local", ""),
	number("ratio_peak", "1", precRatio, "crest speed ratio c_cr/c_p").cf("ratio_peak", ""),
	number("ratio_local", "1", precRatio, "crest speed ratio c_cr/c_loc").cf("ratio_local", ""),
	count("frame", "frame index in the input record").cf("frame", ""),
	number("along_m", "m", precPosition, "crest tip position along the mean direction of travel").cf("along", ""),
	number("across_m", "m", precPosition, "crest tip position across the mean direction of travel").cf("across", ""),
	number("local_wavelength_m", "m", precPosition, "down-crossing to down-crossing wavelength around the crest").cf("local_wavelength", ""),
	number("crest_length_m", "m", precPosition, "length of the crest segment across the mean direction").cf("crest_length", ""),
	number("surface_speed_mps", "m s-1", precSpeed, "linear surface orbital speed u_s at the crest tip").cf("surface_speed", ""),
	number("bx", "1", precRatio, "breaking-inception index B_x = u_s / c_cr normal to the crest (linear estimate)").cf("bx", ""),
	Column{Name: "foam", Units: "1", Long: "1 when the crest carried a whitecap in this frame", Kind: Flag, Required: true, Min: 0, Max: 1, NC: "foam"},
)

// Positions of the columns of Crests.
var (
	CrestTrack      = Crests.must("track_id")
	CrestTime       = Crests.must("time_s")
	CrestX          = Crests.must("x_m")
	CrestY          = Crests.must("y_m")
	CrestElevation  = Crests.must("crest_elevation_m")
	CrestSteepness  = Crests.must("steepness_sc")
	CrestSpeed      = Crests.must("crest_speed_mps")
	CrestRatioPeak  = Crests.must("ratio_peak")
	CrestRatioLocal = Crests.must("ratio_local")
	CrestAlong      = Crests.must("along_m")
	CrestBx         = Crests.must("bx")
	CrestFoam       = Crests.must("foam")
)

func init() { Crests.Check = orderByTrack }

// orderByTrack puts the rows of a crest table in track and time order
// (stable), unless they are in it: the contiguous ragged array of
// crest_tracks.nc needs the rows of a track together.
func orderByTrack(t *Table) (int, string) {
	ids, tm := t.Cols[CrestTrack], t.Cols[CrestTime]
	less := func(i, j int) bool {
		if ids[i] != ids[j] {
			return ids[i] < ids[j]
		}
		return tm[i] < tm[j]
	}
	for i := 1; i < len(ids); i++ {
		if less(i, i-1) {
			perm := make([]int, len(ids))
			for k := range perm {
				perm[k] = k
			}
			sort.SliceStable(perm, func(a, b int) bool { return less(perm[a], perm[b]) })
			t.Permute(perm)
			break
		}
	}
	return -1, ""
}

// TrackRuns returns, for each track of a crest table in table order, the
// index of its first row; the last entry is Len().
func TrackRuns(t *Table) []int {
	ids := t.Cols[CrestTrack]
	var runs []int
	for i := range ids {
		if i == 0 || ids[i] != ids[i-1] {
			runs = append(runs, i)
		}
	}
	return append(runs, len(ids))
}

// Tracks is tracks.csv: one row per crest track (see SummariseTracks).
var Tracks = newSchema("tracks.csv", "tracks", 0,
	count("track_id", "crest track identifier"),
	number("first_time_s", "s", precTime, "time of the track's first row").required(),
	number("last_time_s", "s", precTime, "time of the track's last row").required(),
	count("frames", "rows of the track"),
	number("max_crest_elevation_m", "m", precHeight, "largest crest elevation a_c of the track"),
	number("max_steepness_sc", "1", precRatio, "largest steepness S_c of the track"),
	number("min_ratio_peak", "1", precRatio, "smallest c_cr/c_p of the track"),
	number("mean_ratio_peak", "1", precRatio, "mean c_cr/c_p of the track"),
	number("min_ratio_local", "1", precRatio, "smallest c_cr/c_loc of the track"),
	number("mean_ratio_local", "1", precRatio, "mean c_cr/c_loc of the track"),
	count("rows_with_speed", "rows of the track with a crest speed"),
)

// SummariseTracks condenses a crest table (rows of a track together) into
// tracks.csv, rounded to its precision: per track its first and last
// time, rows, largest a_c (0 when none is known) and S_c, and the
// smallest and mean of each ratio over the rows where it is known.
func SummariseTracks(c *Table) *Table {
	runs := TrackRuns(c)
	t := New(Tracks, len(runs)-1)
	el, sc := c.Cols[CrestElevation], c.Cols[CrestSteepness]
	for k := 0; k+1 < len(runs); k++ {
		a, b := runs[k], runs[k+1]
		row := []float64{c.Cols[CrestTrack][a], c.Cols[CrestTime][a], c.Cols[CrestTime][b-1], float64(b - a), 0, 0}
		for i := a; i < b; i++ {
			row[4] = math.Max(row[4], el[i])
			row[5] = math.Max(row[5], sc[i])
		}
		for _, col := range []int{CrestRatioPeak, CrestRatioLocal} {
			lo, sum, n := math.NaN(), 0.0, 0
			for _, v := range c.Cols[col][a:b] {
				if !math.IsNaN(v) {
					sum += v
					n++
					if !(v >= lo) {
						lo = v
					}
				}
			}
			row = append(row, lo, sum/float64(n))
		}
		n := 0
		for _, v := range c.Cols[CrestRatioPeak][a:b] {
			if !math.IsNaN(v) {
				n++
			}
		}
		row = append(row, float64(n))
		for j, v := range row {
			t.Cols[j][k] = v
		}
	}
	t.Round()
	return t
}

// Spectrum is spectrum.csv: the one-sided frequency spectrum of the
// record's elevation, at least three frequencies, increasing.
var Spectrum = newSchema("spectrum.csv", "frequencies", 3,
	number("frequency_hz", "Hz", precFreq, "frequency").required().atLeast(0),
	number("psd_m2_per_hz", "m2 Hz-1", precSpectral, "power spectral density of the surface elevation").required().atLeast(0),
)

// GaugeSpectrum is gauge_spectrum.csv: the frequency spectra of the maps at
// the gauge's position and of the gauge's series, over their common span.
var GaugeSpectrum = newSchema("gauge_spectrum.csv", "frequencies", 3,
	number("frequency_hz", "Hz", precFreq, "frequency").required().atLeast(0),
	number("maps_psd_m2_per_hz", "m2 Hz-1", precSpectral, "power spectral density of the maps' elevation at the gauge").atLeast(0),
	number("gauge_psd_m2_per_hz", "m2 Hz-1", precSpectral, "power spectral density of the gauge's elevation").atLeast(0),
)

func init() {
	Spectrum.Check = increasing(0, "has a frequency no higher than the one before; frequencies must increase")
	GaugeSpectrum.Check = increasing(0, "has a frequency no higher than the one before; frequencies must increase")
}

// increasing checks that column k strictly increases.
func increasing(k int, msg string) func(t *Table) (int, string) {
	return func(t *Table) (int, string) {
		col := t.Cols[k]
		for i := 1; i < len(col); i++ {
			if !(col[i] > col[i-1]) {
				return i, msg
			}
		}
		return -1, ""
	}
}

// FitLevels are the values of whitecaps.csv's speed_fit column, in the
// order of speed.FitKind.
var FitLevels = []string{"none", "centred", "edge", "short"}

// Whitecaps is whitecaps.csv: one row per whitecap per frame.
var Whitecaps = newSchema("whitecaps.csv", "whitecap rows", 0,
	count("whitecap_id", "whitecap track identifier"),
	number("time_s", "s", precTime, "time").required(),
	count("frame", "frame index in the input record"),
	number("x_m", "m", precPosition, "patch centroid x"),
	number("y_m", "m", precPosition, "patch centroid y"),
	number("front_along_m", "m", precPosition, "breaking front position along the mean direction"),
	number("front_across_m", "m", precPosition, "breaking front position across the mean direction"),
	number("front_length_m", "m", precPosition, "breaking front length across the mean direction").atLeast(0),
	number("area_m2", "m2", precArea, "foam patch area").atLeast(0),
	number("front_speed_mps", "m s-1", precSpeed, "breaking front speed c_br along the mean direction"),
	Column{Name: "speed_fit", Units: "1", Long: "how the front speed was fitted", Kind: Level, Required: true, Levels: FitLevels},
	number("phase_speed_peak_mps", "m s-1", precSpeed, "linear phase speed c_p at the spectral peak"),
	number("phase_speed_local_mps", "m s-1", precSpeed, "linear phase speed c_loc of the parent crest"),
	number("ratio_peak", "1", precRatio, "front speed ratio c_br/c_p"),
	number("ratio_local", "1", precRatio, "front speed ratio c_br/c_loc"),
	count("parent_track_id", "crest track the whitecap rides on (0: none)"),
	number("parent_steepness_sc", "1", precRatio, "steepness S_c of the parent crest"),
)

// Positions of the columns of Whitecaps read by the report.
var (
	WhitecapID         = Whitecaps.must("whitecap_id")
	WhitecapRatioPeak  = Whitecaps.must("ratio_peak")
	WhitecapRatioLocal = Whitecaps.must("ratio_local")
	WhitecapSteepness  = Whitecaps.must("parent_steepness_sc")
)

// Lambda is lambda.csv: the speed bins of Phillips's (1985) Λ(c),
// adjoining in increasing speed.
var Lambda = newSchema("lambda.csv", "speed bins", 1,
	number("speed_min_mps", "m s-1", precFreq, "lower edge of the speed bin").required().atLeast(0),
	number("speed_max_mps", "m s-1", precFreq, "upper edge of the speed bin").required().atLeast(0),
	number("lambda_m-2_s", "m-2 s", precSpectral, "breaking-front length per unit area and unit speed, Lambda(c)").required().atLeast(0),
	count("front_samples", "front samples (fronts times frames) in the bin"),
	number("front_length_m", "m", precPosition, "their length summed over frames").required().atLeast(0),
)

func init() { Lambda.Check = adjoiningBins }

func adjoiningBins(t *Table) (int, string) {
	lo, hi := t.Cols[0], t.Cols[1]
	for i := range lo {
		if !(hi[i] > lo[i]) {
			return i, fmt.Sprintf("has the bin from %g to %g m/s, which is empty or reversed", lo[i], hi[i])
		}
		if i > 0 && math.Abs(lo[i]-hi[i-1]) > 1e-9*math.Max(1, lo[i]) {
			return i, fmt.Sprintf("starts its bin at %g m/s but the one before ends at %g m/s; bins must adjoin in increasing speed", lo[i], hi[i-1])
		}
	}
	return -1, ""
}

// Coverage is coverage.csv: the whitecap coverage W of each analysed
// frame, frames increasing.
var Coverage = newSchema("coverage.csv", "frames", 0,
	number("time_s", "s", precTime, "time").required(),
	count("frame", "frame index in the input record"),
	number("coverage", "1", precSpectral, "whitecap coverage W: foam cells over known cells").atLeast(0).atMost(1),
	count("foam_cells", "foam cells of known elevation"),
	count("valid_cells", "cells of known elevation"),
	number("area_m2", "m2", precArea, "known sea-surface area").atLeast(0),
)

func init() { Coverage.Check = coverageRows }

func coverageRows(t *Table) (int, string) {
	fr, foam, valid := t.Cols[1], t.Cols[3], t.Cols[4]
	for i := range fr {
		if foam[i] > valid[i] {
			return i, fmt.Sprintf("has %g foam cells, more than its %g known cells", foam[i], valid[i])
		}
		if i > 0 && fr[i] <= fr[i-1] {
			return i, fmt.Sprintf("has frame %g after frame %g; frames must increase", fr[i], fr[i-1])
		}
	}
	return -1, ""
}
