package speed

import (
	"math"
	"sort"
)

// DefaultBxThreshold is the breaking-onset threshold of B_x = u_s/c_cr:
// crests that reach about 0.85 go on to break, those that stay below
// recur (Barthelemy et al. 2018, J. Fluid Mech. 841, 463; trade value 0.855
// in the band 0.85–0.86).
const DefaultBxThreshold = 0.855

// InceptionFlag is a crest track whose B_x reached the threshold.
type InceptionFlag struct {
	TrackID   int     `json:"track_id"`
	TimeS     float64 `json:"time_s"`      // first frame at or above the threshold
	Bx        float64 `json:"bx"`          // B_x in that frame
	Steepness float64 `json:"steepness"`   // S_c in that frame
	FoamTimeS float64 `json:"foam_time_s"` // first frame the crest carried foam (NaN: never)
	LeadTimeS float64 `json:"lead_time_s"` // FoamTimeS − TimeS (NaN: never foamed)
}

// Inception is the breaking-inception analysis of a record: which crest
// tracks reached the B_x threshold, and — when whitecaps were found — how
// that compares with the crests that carried foam.
type Inception struct {
	Threshold    float64         `json:"threshold"`
	TracksWithBx int             `json:"tracks_with_bx"`
	Flags        []InceptionFlag `json:"flags"`
	// Confusion over the tracks with B_x, when a foam mask was analysed.
	HaveFoam            bool `json:"have_foam"`
	FlaggedFoamed       int  `json:"flagged_foamed"`
	FlaggedNotFoamed    int  `json:"flagged_not_foamed"`
	NotFlaggedFoamed    int  `json:"not_flagged_foamed"`
	NotFlaggedNotFoamed int  `json:"not_flagged_not_foamed"`
	// ShareFoamedFlagged is the share of foam-carrying crests that were
	// flagged; ShareFlaggedFoamed the share of flagged crests that foamed.
	ShareFoamedFlagged float64 `json:"share_of_foamed_that_were_flagged"`
	ShareFlaggedFoamed float64 `json:"share_of_flagged_that_foamed"`
	// Lead times from flag to first foam, for flagged crests that foamed
	// afterwards (or at the same frame).
	LeadTimeN      int     `json:"lead_time_n"`
	LeadTimeMedian float64 `json:"lead_time_median_s"`
	LeadTimeMin    float64 `json:"lead_time_min_s"`
	LeadTimeMax    float64 `json:"lead_time_max_s"`
	// How u_s was computed (set by the record analysis): the window of
	// the transform in seconds, the surface-speed band in Hz (0 = every
	// frequency; VelocityBand) and the decimation in time (Decimation).
	SurfaceSpeedWindowS    float64 `json:"surface_speed_window_s"`
	SurfaceSpeedBandHz     float64 `json:"surface_speed_band_hz"`
	SurfaceSpeedDecimation int     `json:"surface_speed_decimation"`
}

// InceptionOf flags crest tracks by B_x and compares them with whitecaps.
// rows must be ordered by track and time (as the record analysis returns them);
// wc may be nil.
func InceptionOf(rows []CrestRow, wc *WhitecapResult, threshold float64) *Inception {
	if threshold <= 0 {
		threshold = DefaultBxThreshold
	}
	in := &Inception{Threshold: threshold, HaveFoam: wc != nil,
		ShareFoamedFlagged: math.NaN(), ShareFlaggedFoamed: math.NaN(),
		LeadTimeMedian: math.NaN(), LeadTimeMin: math.NaN(), LeadTimeMax: math.NaN()}
	firstFoam := map[int]float64{}
	if wc != nil {
		for _, r := range wc.Rows {
			if r.ParentTrackID == 0 {
				continue
			}
			if t, ok := firstFoam[r.ParentTrackID]; !ok || r.Time < t {
				firstFoam[r.ParentTrackID] = r.Time
			}
		}
	}
	var leads []float64
	for i := 0; i < len(rows); {
		j := i
		for j < len(rows) && rows[j].TrackID == rows[i].TrackID {
			j++
		}
		id := rows[i].TrackID
		hasBx := false
		var flag *InceptionFlag
		for _, r := range rows[i:j] {
			if math.IsNaN(r.BreakingIndex) {
				continue
			}
			hasBx = true
			if flag == nil && r.BreakingIndex >= threshold {
				flag = &InceptionFlag{TrackID: id, TimeS: r.Time, Bx: r.BreakingIndex, Steepness: r.Steepness,
					FoamTimeS: math.NaN(), LeadTimeS: math.NaN()}
			}
		}
		i = j
		if !hasBx {
			continue
		}
		in.TracksWithBx++
		ft, foamed := firstFoam[id]
		if flag != nil {
			if foamed {
				flag.FoamTimeS = ft
				flag.LeadTimeS = ft - flag.TimeS
				if flag.LeadTimeS >= 0 {
					leads = append(leads, flag.LeadTimeS)
				}
			}
			in.Flags = append(in.Flags, *flag)
		}
		if !in.HaveFoam {
			continue
		}
		switch {
		case flag != nil && foamed:
			in.FlaggedFoamed++
		case flag != nil:
			in.FlaggedNotFoamed++
		case foamed:
			in.NotFlaggedFoamed++
		default:
			in.NotFlaggedNotFoamed++
		}
	}
	if n := in.FlaggedFoamed + in.NotFlaggedFoamed; n > 0 {
		in.ShareFoamedFlagged = float64(in.FlaggedFoamed) / float64(n)
	}
	if n := in.FlaggedFoamed + in.FlaggedNotFoamed; n > 0 {
		in.ShareFlaggedFoamed = float64(in.FlaggedFoamed) / float64(n)
	}
	if len(leads) > 0 {
		sort.Float64s(leads)
		in.LeadTimeN = len(leads)
		in.LeadTimeMedian = median(append([]float64(nil), leads...))
		in.LeadTimeMin, in.LeadTimeMax = leads[0], leads[len(leads)-1]
	}
	return in
}
