package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"

	"crestspeed/report"
	"crestspeed/report/table"
	"crestspeed/samples"
	"crestspeed/speed"
)

// exactCrestSpeeds compares the crest speeds a tracking run measured
// (crests.csv in dir) with the exact linear crest speed at the same tips
// and times: c = −η_st/η_ss along θ0 (thetaDeg, counter-clockwise from +x,
// the direction the run measured along) at fixed cross-position, from the
// generator's own components (samples.CrestSpeedAlong). It returns the
// medians of both over the rows with a speed where the exact section has
// a maximum, their number, and the number of rows with a speed.
func exactCrestSpeeds(dir string, sea *samples.LinearSea, thetaDeg float64) (measured, exact float64, n, rows int, err error) {
	f, err := os.Open(filepath.Join(dir, "crests.csv"))
	if err != nil {
		return 0, 0, 0, 0, err
	}
	defer f.Close()
	t, err := table.Read(f, table.Crests, f.Name())
	if err != nil {
		return 0, 0, 0, 0, err
	}
	theta := thetaDeg * math.Pi / 180
	var m, e []float64
	for i := 0; i < t.Len(); i++ {
		c := t.Cols[table.CrestSpeed][i]
		if math.IsNaN(c) {
			continue
		}
		rows++
		x, y, tt := t.Cols[table.CrestX][i], t.Cols[table.CrestY][i], t.Cols[table.CrestTime][i]
		ce, ss := sea.CrestSpeedAlong(x, y, tt, theta)
		if !(ss < 0) || math.IsNaN(ce) {
			continue
		}
		m, e = append(m, c), append(e, ce)
	}
	if len(m) == 0 {
		return math.NaN(), math.NaN(), 0, rows, fmt.Errorf("no crest rows with a speed in %s", dir)
	}
	slices.Sort(m)
	slices.Sort(e)
	return m[len(m)/2], e[len(e)/2], len(m), rows, nil
}

// bandLimited is the generator's sea as the crests were found on it: its
// components weighted by the gain of the low-pass the run applied (the
// noise low-pass or a dominant-wave band, from its summary), or the sea
// itself when the maps were taken as they are.
func bandLimited(sea *samples.LinearSea, sum *report.Summary) (*samples.LinearSea, string) {
	lo, hi := 0.0, 0.0
	switch {
	case sum.Band != nil:
		lo, hi = sum.Band.LowHz, sum.Band.HighHz
	case sum.NoiseLowPassHz > 0:
		hi = sum.NoiseLowPassHz
	default:
		return sea, ""
	}
	out := sea.Filtered(func(k float64) float64 { return speed.BandGainAt(k, sea.DepthM, lo, hi) })
	if lo > 0 {
		return out, fmt.Sprintf(" of the sea band-passed to %.2f–%.2f Hz as the maps were", lo, hi)
	}
	return out, fmt.Sprintf(" of the sea low-passed at %.2f Hz as the maps were", hi)
}

// logExactSpeeds prints the measured median crest speed beside the exact
// one, or why it cannot.
func logExactSpeeds(con *console, label, dir string, full *samples.LinearSea, sum *report.Summary) {
	thetaDeg := sum.SeaState.MeanDirection
	sea, note := bandLimited(full, sum)
	meas, ex, n, rows, err := exactCrestSpeeds(dir, sea, thetaDeg)
	if err != nil {
		con.logf("  %-26s (not compared: %v)", label, err)
		return
	}
	// Tips found on the generator's sea lie on its crests (η_ss < 0) but
	// for a few; when many do not, the maps' frame or time base is not the
	// generator's and the exact values would mean nothing.
	if float64(n) < 0.8*float64(rows) {
		con.logf("  %-26s (not compared: only %d of %d tips lie on a crest of the generator's sea in the maps' frame)", label, n, rows)
		return
	}
	con.logf("  %-26s %10.3f %10.3f   (median over %d crest rows; exact: linear c = -η_st/η_ss at each tip%s)", label, ex, meas, n, note)
}
