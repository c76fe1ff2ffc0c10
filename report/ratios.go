package report

import (
	"math"
	"sort"
	"sync"
)

// RatioDistributions are the distributions of one crest-speed ratio per
// steepness class and over all crests.
type RatioDistributions struct {
	// Column is the crests.csv column of the ratio (ratio_peak or
	// ratio_local).
	Column  string
	Classes []Distribution
	All     Distribution
}

// Stats returns the statistics as summary.json holds them.
func (r RatioDistributions) Stats() RatioStats {
	out := RatioStats{All: r.All.Stats}
	for _, c := range r.Classes {
		out.Classes = append(out.Classes, c.Stats)
	}
	return out
}

// DistributionsOf computes the distribution of the ratio in column col
// of the table (ColRatioPeak or ColRatioLocal) for each steepness class
// (inner class boundaries, see ClassBounds) and for all crests: the
// statistics of Summarise with the number of tracks, the
// Freedman–Diaconis histogram, the kernel density curve and bootstrap
// confidence intervals resampling whole tracks (BootstrapTracks). Rows
// whose ratio is unknown are left out; a row belongs to the class whose
// [min, max) holds its steepness S_c, as in ClassStatistics.
func DistributionsOf(t *CrestTable, col int, inner []float64, opt BootstrapOptions) RatioDistributions {
	bounds := ClassBounds(inner)
	vals := t.Cols[col]
	sc := t.Cols[ColSteepness]
	runs := t.TrackRuns()
	nTracks := len(runs) - 1
	track := make([]int32, t.Len())
	for k := 0; k < nTracks; k++ {
		for i := runs[k]; i < runs[k+1]; i++ {
			track[i] = int32(k)
		}
	}
	group := make([]int8, t.Len())
	per := make([][]float64, len(bounds))
	perTracks := make([]map[int32]bool, len(bounds))
	for k := range perTracks {
		perTracks[k] = map[int32]bool{}
	}
	allTracks := map[int32]bool{}
	all := make([]float64, 0, len(vals))
	for i, v := range vals {
		group[i] = -1
		if math.IsNaN(v) || math.IsInf(v, 0) {
			continue
		}
		all = append(all, v)
		allTracks[track[i]] = true
		for k, b := range bounds {
			if sc[i] >= b[0] && sc[i] < b[1] {
				group[i] = int8(k)
				per[k] = append(per[k], v)
				perTracks[k][track[i]] = true
				break
			}
		}
	}
	out := RatioDistributions{Column: CrestColumns[col], Classes: make([]Distribution, len(bounds))}
	var wg sync.WaitGroup
	var cis []StatIntervals
	wg.Add(1)
	go func() {
		defer wg.Done()
		cis = BootstrapTracks(vals, track, group, nTracks, len(bounds), opt)
	}()
	dist := func(v []float64, lo, hi float64, ntr int) Distribution {
		d := Distribution{Stats: Summarise(v, lo, hi)}
		d.Stats.Tracks = ntr
		sort.Float64s(v)
		d.Hist = FreedmanDiaconis(v)
		d.PDF = DensityCurve(v)
		return d
	}
	for k, b := range bounds {
		out.Classes[k] = dist(per[k], b[0], b[1], len(perTracks[k]))
	}
	out.All = dist(all, 0, math.Inf(1), len(allTracks))
	wg.Wait()
	for k := range out.Classes {
		setCI(&out.Classes[k].Stats, cis[k])
	}
	setCI(&out.All.Stats, cis[len(bounds)])
	return out
}

func setCI(s *Stats, iv StatIntervals) {
	s.MeanCI, s.MedianCI, s.ModeCI = iv.Mean, iv.Median, iv.Mode
}
