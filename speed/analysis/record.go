package analysis

import (
	"fmt"
	"math"
	"time"

	"crestspeed/ingest"
	"crestspeed/speed"
	"crestspeed/tracking"
)

// Record is the result of Run.
type Record struct {
	Meta       ingest.ElevationMeta
	FramesRead int
	Skipped    ingest.SkipCounts
	// MaskedCells counts the cells the reader masked (outside the valid
	// range, implausible, spikes), by reason, when the source counts them.
	MaskedCells    ingest.CellCounts
	Gaps           []ingest.Gap
	FrameInterval  float64
	SeaState       speed.SeaState
	DirectionGiven bool
	DepthFromFile  bool
	Refs           speed.References
	SpeedWindowS   float64
	MaskedFraction float64 // fraction of grid cells unknown, over the frames read
	Detections     int
	// TrackCount is the number of crest tracks; the tracks themselves are
	// not kept, only their rows.
	TrackCount int
	Link       tracking.LinkStats
	// Rows holds one row per crest per frame, in order of track ID and,
	// within a track, of frame: the part of the result that grows with the
	// record (176 bytes a row, speed.CrestRow).
	Rows []speed.CrestRow
	// ElevationJumpShare is the share of the tracks' frame-to-frame steps
	// whose crest elevation changed by more than 0.3 Hm0 (0 without steps).
	ElevationJumpShare float64
	// steps and jumps counted for ElevationJumpShare
	elevationSteps, elevationJumps int
	rows                           rowChunks // Rows while the crest pass runs
	// NoiseLowPassHz is the frequency (the start of the noise floor) at
	// which the maps were low-passed for crest detection because they
	// carry a noise floor (Options.NoiseLowPass); 0 when they were not.
	NoiseLowPassHz float64
	// EdgeCrests is set when the grid was too short along θ0 for crests
	// to be enclosed by both zero crossings, and crests running into its
	// edge were kept for their speed (tracking.DetectOptions.EdgeCrests).
	EdgeCrests bool
	// Band is the dominant-wave band the crests were found in (nil: every
	// wave the maps hold).
	Band *Band
	// VelocityWindowFrames is the 3-D FFT window of the breaking-index
	// pass in frames (0 when the pass did not run); RowsWithBx counts rows
	// with B_x.
	VelocityWindowFrames, RowsWithBx int
	// VelocityBandHz is the surface-speed band of that pass (0 = every
	// frequency; speed.VelocityBand) and VelocityDecimation the factor its
	// frames were decimated by in time.
	VelocityBandHz     float64
	VelocityDecimation int
	// RowsWithoutSpeed counts crest rows whose speed window was incomplete
	// (track ends, tracks shorter than the window).
	RowsWithoutSpeed int
	Timings          map[string]time.Duration
	// Whitecaps is the whitecap analysis (nil without a foam mask), and
	// Inception the breaking-inception flags (nil without B_x).
	Whitecaps *speed.WhitecapResult
	Inception *speed.Inception
	// Probe is the maps' elevation at Options.Probe in every frame of the
	// record's time base (frame k at Meta.Times[0] + k·FrameInterval; NaN
	// where the frame is missing or the point unknown); nil without a
	// probe.
	Probe []float32
	// Warnings say where the record is too short, too coarse or too small
	// for the estimates to be trusted; they are reported, not fatal.
	Warnings []string
}

// checkRecord lists the ways the record limits the estimates.
func (rec *Record) checkRecord() {
	ss := rec.SeaState
	meta := rec.Meta
	dur := meta.Times[len(meta.Times)-1] - meta.Times[0]
	lp := rec.Refs.PeakPhaseSpeed * ss.Tp
	dx := math.Max(meta.Grid.Dx(), meta.Grid.Dy())
	extent := math.Min(float64(meta.Grid.Nx()-1)*meta.Grid.Dx(), float64(meta.Grid.Ny()-1)*meta.Grid.Dy())
	if dur < 20*ss.Tp {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the record spans %.0f s, only %.0f peak periods; Hm0, Tp and c_p are uncertain below about 20 periods (common practice: 100 or more for a stable spectrum)", dur, dur/ss.Tp))
	}
	if ss.Tp < 4*rec.FrameInterval {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the peak period %.2f s is less than four frame intervals (%.3f s); crest tracking and the direction estimate need a higher frame rate", ss.Tp, rec.FrameInterval))
	}
	if lp < 8*dx {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the peak wavelength %.1f m spans fewer than 8 grid cells of %.2f m; crest positions and widths are coarse", lp, dx))
	}
	if extent < 1.5*lp {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf(
			"the grid (%.0f m across at its narrowest) is shorter than 1.5 peak wavelengths (%.0f m); few crests are enclosed by zero crossings and tracks are short", extent, lp))
	}
	if rec.EdgeCrests {
		rec.Warnings = append(rec.Warnings,
			"the grid is shorter than 1.5 peak wavelengths along the mean direction: crests that run into its edge are followed for their speed, without a zero-crossing width or steepness S_c")
	}
	if rec.MaskedFraction > 0.5 {
		rec.Warnings = append(rec.Warnings, fmt.Sprintf("%.0f %% of the grid cells are unknown over the record", 100*rec.MaskedFraction))
	}
}

// markFoam sets Foam on every crest row whose crest carried a whitecap in
// that frame.
func (rec *Record) markFoam() {
	if rec.Whitecaps == nil {
		return
	}
	type key struct{ track, frame int }
	carried := map[key]bool{}
	for _, r := range rec.Whitecaps.Rows {
		if r.ParentTrackID != 0 {
			carried[key{r.ParentTrackID, r.Frame}] = true
		}
	}
	for i := range rec.Rows {
		rec.Rows[i].Foam = carried[key{rec.Rows[i].TrackID, rec.Rows[i].Frame}]
	}
}
