package report

import (
	"math"
	"math/rand/v2"

	"crestspeed/speed"
	"crestspeed/tracking"
)

type rowView = speed.CrestRow

// syntheticRows makes crest rows of nTracks tracks (about meanRows rows
// each, 10 frames per second) shaped like analysed crests of a 5 s sea:
// crests that grow and decay along the track, crest speeds that dip below
// the phase speed, no speed in the first and last two rows of a track.
// Rows are ordered by track and time, as analysis.Run returns them.
func syntheticRows(rng *rand.Rand, nTracks, meanRows int) []speed.CrestRow {
	const dt, cp, theta = 0.1, 7.8, 0.3
	rows := make([]speed.CrestRow, 0, nTracks*meanRows)
	for id := 1; id <= nTracks; id++ {
		n := max(3, meanRows/2+rng.IntN(meanRows+1))
		f0 := rng.IntN(1000)
		s0 := 10 + 40*rng.Float64()
		n0 := 60 * rng.Float64()
		amax := 0.2 + 1.0*rng.Float64()
		r0 := 0.7 + 0.2*rng.Float64()
		lam := 20 + 20*rng.Float64()
		cloc := math.Sqrt(9.81 * lam / (2 * math.Pi))
		s := s0
		for i := 0; i < n; i++ {
			u := (float64(i) - float64(n)/2) / (float64(n)/3 + 1)
			a := amax * math.Exp(-u*u)
			ratio := r0 + 0.15*u*u/(1+u*u) + 0.03*rng.NormFloat64()
			c := ratio * cp
			w := lam / 2 * (0.9 + 0.2*rng.Float64())
			row := speed.CrestRow{
				TrackID: id,
				Crest: tracking.Crest{
					Frame: f0 + i, Time: float64(f0+i) * dt,
					S: s, N: n0, Elevation: a, Width: w, Wavelength: lam, Length: 5 + 10*rng.Float64(),
				},
				CrestSpeed: c, PhaseSpeedPeak: cp, PhaseSpeedLocal: cloc,
			}
			row.X = s*math.Cos(theta) - n0*math.Sin(theta)
			row.Y = s*math.Sin(theta) + n0*math.Cos(theta)
			row.Steepness = a * math.Pi / w
			if i < 2 || i >= n-2 {
				row.CrestSpeed = math.NaN()
			}
			if i%7 == 3 {
				row.Wavelength, row.PhaseSpeedLocal = math.NaN(), math.NaN()
			}
			row.RatioPeak = row.CrestSpeed / row.PhaseSpeedPeak
			row.RatioLocal = row.CrestSpeed / row.PhaseSpeedLocal
			rows = append(rows, row)
			s += c * dt
		}
	}
	return rows
}

// syntheticTable is the crest table of syntheticRows.
func syntheticTable(rng *rand.Rand, nTracks, meanRows int) *CrestTable {
	return TableFromRows(syntheticRows(rng, nTracks, meanRows))
}

// tableRows turns a table back into rows (the columns crests.csv has).
func tableRows(t *CrestTable) []speed.CrestRow {
	rows := make([]speed.CrestRow, t.Len())
	c := &t.Cols
	for i := range rows {
		rows[i] = speed.CrestRow{
			TrackID: int(c[ColTrackID][i]),
			Crest: tracking.Crest{Frame: int(c[ColFrame][i]), Time: c[ColTime][i], X: c[ColX][i], Y: c[ColY][i],
				S: c[ColAlong][i], N: c[ColAcross][i], Elevation: c[ColElevation][i], Width: c[ColWidth][i],
				Wavelength: c[ColWavelength][i], Length: c[ColLength][i]},
			Steepness: c[ColSteepness][i], CrestSpeed: c[ColCrestSpeed][i],
			PhaseSpeedPeak: c[ColPhaseSpeedPeak][i], PhaseSpeedLocal: c[ColPhaseSpeedLocal][i],
			RatioPeak: c[ColRatioPeak][i], RatioLocal: c[ColRatioLocal][i],
		}
	}
	return rows
}
