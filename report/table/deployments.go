package table

import (
	"fmt"
	"math"
)

// DeploymentGroups names the groups of the per-class columns of
// deployments.csv for k steepness classes: "class1" … "classK", then
// "all" (every crest, or every whitecap).
func DeploymentGroups(k int) []string {
	out := make([]string, 0, k+1)
	for i := 1; i <= k; i++ {
		out = append(out, fmt.Sprintf("class%d", i))
	}
	return append(out, "all")
}

// DeploymentClassColumns are the per-class columns of deployments.csv
// for group g (see DeploymentGroups), in the order they appear.
func DeploymentClassColumns(g string) []string {
	return []string{
		"crest_rows_" + g, "crest_tracks_" + g,
		"median_ccr_over_cp_" + g, "median_ccr_over_cp_" + g + "_lo90", "median_ccr_over_cp_" + g + "_hi90",
		"whitecap_rows_" + g, "whitecaps_" + g,
		"median_cbr_over_cp_" + g, "median_cbr_over_cp_" + g + "_lo90", "median_cbr_over_cp_" + g + "_hi90",
	}
}

// Deployments is the schema of deployments.csv, one row per deployment
// of a campaign, for the steepness classes bounds ([min, max) of S_c, as
// stats.ClassBounds gives them): where the deployment came from and when,
// its sea state, its counts, and per class the median crest-speed ratio
// c_cr/c_p and whitecap front-speed ratio c_br/c_p with the ends of their
// 90 % intervals. Unknown values (no whitecaps, no wind speed, an
// interval of fewer than two tracks) are empty fields.
func Deployments(bounds [][2]float64) *Schema {
	cols := []Column{
		count("deployment", "index of the deployment in the campaign, from 1"),
		text("site", "site attribute of the record"),
		text("track_folder", "folder the tracking stage wrote").required(),
		text("start_utc", "UTC time of the first frame (empty when the record's time axis has no reference time)"),
		text("end_utc", "UTC time of the last frame"),
		number("duration_s", "s", precTime, "time from the first to the last frame").required(),
		count("frames_read", "frames read from the record"),
		number("hm0_m", "m", precHeight, "significant wave height H_m0 = 4 sqrt(m0)"),
		number("tp_s", "s", Fixed(4), "peak period T_p"),
		number("peak_phase_speed_mps", "m s-1", precSpeed, "linear phase speed c_p at the spectral peak along the mean direction"),
		number("peak_wavelength_m", "m", precPosition, "peak wavelength c_p T_p"),
		number("mean_direction_deg", "degree", Fixed(2), "mean direction of wave travel, counter-clockwise from the grid's +x axis"),
		number("depth_m", "m", precPosition, "water depth (empty: deep water)"),
		number("peak_steepness", "1", precRatio, "peak steepness H_m0 k_p / 2, k_p = 2 pi / (c_p T_p)"),
		number("wind_speed_mps", "m s-1", precSpeed, "wind speed recorded with the record (empty: none recorded)"),
		number("wave_age", "1", precRatio, "wave age c_p / U (empty without a wind speed)"),
		count("crest_tracks", "crest tracks"),
		count("crest_rows", "crest rows (one per crest per frame)"),
		count("crest_rows_with_speed", "crest rows with a crest speed"),
		Column{Name: "has_whitecaps", Units: "1", Long: "1 when the record had a foam mask and whitecap results", Kind: Flag, Required: true, Min: 0, Max: 1},
		count("whitecap_tracks", "whitecap tracks (0 without whitecap results)"),
		count("whitecap_rows", "whitecap rows (0 without whitecap results)"),
	}
	for gi, g := range DeploymentGroups(len(bounds)) {
		what := "every crest"
		if gi < len(bounds) {
			what = classText(bounds[gi])
		}
		c := DeploymentClassColumns(g)
		cols = append(cols,
			count(c[0], "crest rows with a known c_cr/c_p, "+what),
			count(c[1], "crest tracks they come from, "+what),
			number(c[2], "1", precRatio, "median crest speed ratio c_cr/c_p, "+what),
			number(c[3], "1", precRatio, "lower end of the 90 % bootstrap interval of the median c_cr/c_p, "+what),
			number(c[4], "1", precRatio, "upper end of the 90 % bootstrap interval of the median c_cr/c_p, "+what),
			count(c[5], "whitecap rows with a known c_br/c_p, "+parentText(what)),
			count(c[6], "whitecaps they come from, "+parentText(what)),
			number(c[7], "1", precRatio, "median whitecap front speed ratio c_br/c_p, "+parentText(what)),
			number(c[8], "1", precRatio, "lower end of the 90 % bootstrap interval of the median c_br/c_p, "+parentText(what)),
			number(c[9], "1", precRatio, "upper end of the 90 % bootstrap interval of the median c_br/c_p, "+parentText(what)),
		)
	}
	s := newSchema("deployments.csv", "deployments", 1, cols...)
	s.Check = increasing(0, "has a deployment index no higher than the one before; deployments are numbered 1, 2, …")
	return s
}

// classText describes a steepness class in a column's long name.
func classText(b [2]float64) string {
	if math.IsInf(b[1], 1) {
		return fmt.Sprintf("S_c >= %g", b[0])
	}
	return fmt.Sprintf("%g <= S_c < %g", b[0], b[1])
}

// parentText says that a whitecap's class is that of its parent crest.
func parentText(what string) string {
	if what == "every crest" {
		return "every whitecap"
	}
	return "parent crest " + what
}
