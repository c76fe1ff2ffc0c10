package analysis

import (
	"errors"
	"fmt"
	"math"

	"crestspeed/speed"
)

// Options configure Run. The yaml tags are the keys of the "track" section
// of the configuration; DefaultOptions gives every default, and zero values
// documented as "automatic" are resolved from the record.
type Options struct {
	// DepthM overrides the file's water_depth_m, metres; 0 = deep water,
	// nil = the file's value (deep water when it has none).
	DepthM *float64 `yaml:"depth_m,omitempty"`
	// DirectionDeg overrides the estimated mean direction of travel,
	// degrees counter-clockwise from the grid's +x axis; nil = estimated.
	DirectionDeg *float64 `yaml:"direction_deg,omitempty"`
	// CurrentSpeedMPS and CurrentDirectionDeg give the uniform current: its
	// speed (m/s) and the direction it flows toward (degrees
	// counter-clockwise from +x). Default none.
	CurrentSpeedMPS     float64 `yaml:"current_speed_mps"`
	CurrentDirectionDeg float64 `yaml:"current_direction_deg"`
	// VorticityPerS is dU/dz of a linear shear current, 1/s; positive means
	// the current grows toward the surface in the direction the waves
	// travel (see speed.VorticityPhaseSpeed). Default 0.
	VorticityPerS float64 `yaml:"vorticity_per_s"`
	// MinCrestFraction is the smallest crest elevation kept, as a fraction
	// of Hm0 (default 0.1); MinCrestLengthM the shortest crest segment
	// kept, metres across θ0 (default 2).
	MinCrestFraction float64 `yaml:"min_crest_fraction_hm0"`
	MinCrestLengthM  float64 `yaml:"min_crest_length_m"`
	// MaxGapFrames is how many frames a track may miss and continue
	// (default 2).
	MaxGapFrames int `yaml:"max_gap_frames"`
	// SpeedWindowS is the full width of the crest-speed fit window in
	// seconds; 0 = Tp/8, at least 2.5 frame intervals (default,
	// DefaultSpeedWindow).
	SpeedWindowS float64 `yaml:"speed_window_s"`
	// BreakingIndex turns on the breaking-inception index: the linear
	// surface speed from a dispersion-filtered 3-D FFT
	// (speed.SurfaceVelocity) and B_x = u_s/c_cr at every crest tip
	// (default on).
	BreakingIndex bool `yaml:"breaking_index"`
	// VelocityWindowS is the length of the 3-D FFT windows in seconds;
	// 0 = 3 Tp (default), capped so two windows of the grid fit in 1.5 GiB.
	VelocityWindowS float64 `yaml:"velocity_window_s"`
	// DominantBandFp, when given as [low, high] in multiples of the
	// record's F_p, finds and follows the crests of the waves in that band
	// alone (for example [0.5, 2]; low 0 is a low-pass): each map is
	// band-passed in wavenumber through the linear dispersion relation
	// (speed.BandPass) before crest detection, while the sea state, the
	// reference speeds and B_x's surface speed come from the maps as they
	// are. Empty (default): every wave the maps hold.
	DominantBandFp []float64 `yaml:"dominant_band_fp"`
	// NoiseLowPass finds crests on maps low-passed where the sea-state
	// spectrum falls below twice its noise floor, when it shows one
	// (speed.SeaState.NoiseFloorFound): above that the maps hold more
	// reconstruction noise than waves, whose spurious maxima and zero
	// crossings would cut crests and move their tips. Default on; no
	// effect on maps without a noise floor.
	NoiseLowPass bool `yaml:"noise_lowpass"`
	// VelocityBandLoss is the share of the waves' surface-speed variance
	// the breaking-index pass may leave out at the top of the spectrum
	// (speed.VelocityBand): frequencies above the band so found are not
	// computed, and frames are decimated in time to it. Default 1e-4 (an
	// RMS speed error of at most 1 % of the waves' RMS surface speed,
	// √1e-4); 0 computes every frequency the frames resolve.
	VelocityBandLoss float64 `yaml:"velocity_band_loss"`
	// BxThreshold is the B_x at which a crest is flagged (default
	// speed.DefaultBxThreshold, 0.855; 0 means that default).
	BxThreshold float64 `yaml:"bx_threshold"`
	// Whitecaps turns on whitecap analysis for records with a foam mask
	// (default on), with the settings in Breaking; its MaxGapFrames is
	// this record's, and its SpeedWindowS this record's SpeedWindowS when
	// that is set, else Tp/4.
	Whitecaps bool                  `yaml:"whitecaps"`
	Breaking  speed.BreakingOptions `yaml:",inline"`
	// Probe, when set, samples the maps at a point (a virtual wave gauge)
	// in every frame: Record.Probe.
	Probe *ProbePoint `yaml:"-"`
	// Workers run the per-frame work in parallel; ≤ 0 means one. The
	// result does not depend on it.
	Workers int `yaml:"-"`
	// Progress, if set, is told how far each pass has got.
	Progress func(pass string, done, total int) `yaml:"-"`
}

// DefaultOptions returns the defaults of every setting.
func DefaultOptions() Options {
	return Options{
		MinCrestFraction: 0.1,
		MinCrestLengthM:  2,
		MaxGapFrames:     2,
		BreakingIndex:    true,
		BxThreshold:      speed.DefaultBxThreshold,
		VelocityBandLoss: 1e-4,
		NoiseLowPass:     true,
		Whitecaps:        true,
		Breaking:         speed.DefaultBreakingOptions(),
	}
}

// ErrSetting marks an absurd setting; errors.Is(err, ErrSetting) holds for
// every error Validate returns.
var ErrSetting = errors.New("invalid setting")

func settingErr(format string, a ...any) error {
	return fmt.Errorf("%w: "+format, append([]any{ErrSetting}, a...)...)
}

// finite reports whether v is neither NaN nor infinite.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// Validate reports the first absurd setting, naming its configuration key.
func (o Options) Validate() error {
	switch {
	case o.DepthM != nil && !finite(*o.DepthM):
		return settingErr("depth_m %g is not a finite number of metres; use 0 for deep water", *o.DepthM)
	case o.DepthM != nil && *o.DepthM < 0:
		return settingErr("depth_m %g m is negative; use 0 for deep water", *o.DepthM)
	case o.DepthM != nil && *o.DepthM > 0 && *o.DepthM < 0.05:
		return settingErr("depth_m %g m is shallower than 5 cm; give the depth in metres, or 0 for deep water", *o.DepthM)
	case o.DirectionDeg != nil && !(finite(*o.DirectionDeg) && math.Abs(*o.DirectionDeg) <= 360):
		return settingErr("direction_deg %g° is outside ±360°", *o.DirectionDeg)
	case !(finite(o.CurrentSpeedMPS) && o.CurrentSpeedMPS >= 0 && o.CurrentSpeedMPS <= 10):
		return settingErr("current_speed_mps %g m/s is outside 0–10 m/s", o.CurrentSpeedMPS)
	case !(finite(o.CurrentDirectionDeg) && math.Abs(o.CurrentDirectionDeg) <= 360):
		return settingErr("current_direction_deg %g° is outside ±360°", o.CurrentDirectionDeg)
	case !(finite(o.VorticityPerS) && math.Abs(o.VorticityPerS) <= 5):
		return settingErr("vorticity_per_s %g 1/s is outside ±5 1/s", o.VorticityPerS)
	case !(o.MinCrestFraction >= 0 && o.MinCrestFraction < 2):
		return settingErr("min_crest_fraction_hm0 %g is outside 0–2", o.MinCrestFraction)
	case !(o.MinCrestLengthM >= 0 && o.MinCrestLengthM <= 1e4):
		return settingErr("min_crest_length_m %g m is outside 0–10 000 m", o.MinCrestLengthM)
	case o.MaxGapFrames < 0 || o.MaxGapFrames > 100:
		return settingErr("max_gap_frames %d is outside 0–100", o.MaxGapFrames)
	case !(o.SpeedWindowS >= 0 && o.SpeedWindowS <= 600):
		return settingErr("speed_window_s %g s is outside 0–600 s (0 = Tp/8)", o.SpeedWindowS)
	case !(o.BxThreshold >= 0 && o.BxThreshold < 5):
		return settingErr("bx_threshold %g is outside 0–5 (0 = %g)", o.BxThreshold, speed.DefaultBxThreshold)
	case len(o.DominantBandFp) != 0 && (len(o.DominantBandFp) != 2 || !(o.DominantBandFp[0] >= 0 && o.DominantBandFp[1] > o.DominantBandFp[0] && o.DominantBandFp[1] <= 20)):
		return settingErr("dominant_band_fp %v must be two multiples of F_p, low and high, with 0 ≤ low < high ≤ 20 (empty = every wave)", o.DominantBandFp)
	case !(o.VelocityBandLoss >= 0 && o.VelocityBandLoss <= 0.1):
		return settingErr("velocity_band_loss %g is outside 0–0.1 (0 = every frequency)", o.VelocityBandLoss)
	case !(o.VelocityWindowS >= 0 && o.VelocityWindowS <= 3600):
		return settingErr("velocity_window_s %g s is outside 0–3600 s (0 = 3 Tp)", o.VelocityWindowS)
	}
	if err := o.Breaking.Validate(); err != nil {
		return fmt.Errorf("%w: %w", ErrSetting, err)
	}
	return nil
}

// current returns the uniform current as grid components.
func (o Options) current() speed.Current {
	d := o.CurrentDirectionDeg * math.Pi / 180
	return speed.Current{U: o.CurrentSpeedMPS * math.Cos(d), V: o.CurrentSpeedMPS * math.Sin(d)}
}

// ProbePoint is a position on the grid, metres.
type ProbePoint struct{ X, Y float64 }

// dominant reports whether the crests are to be found in a band only.
func (o Options) dominant() bool { return len(o.DominantBandFp) == 2 }
