// Package speed holds the wave physics that turns tracked crests into speeds
// and ratios: the linear dispersion relation of surface gravity waves (finite
// depth, uniform current, constant vorticity), frequency spectra of the record
// and the sea state (Hm0, Tp, mean direction) that sets the nominal phase
// speed the crest speeds are compared with.
//
// # Model
//
// Linear waves on water of depth h obey ω² = g k tanh(kh) (still water).
// WaveNumber inverts it for k with an explicit start (Fenton & McKee 1990)
// polished by Newton iterations; Omega, PhaseSpeed and GroupSpeed evaluate it
// forwards. Depth convention everywhere in this package: depth <= 0 or +Inf
// means deep water (tanh(kh) = 1).
//
// A uniform current U (a Current, east/x and north/y components) Doppler-shifts
// the frequency seen by a fixed observer: ω = σ(k) + k·U with σ the
// still-water frequency. A linear shear current U(z) = U_s + Ω z (z up, surface
// at z = 0) changes the intrinsic speed as well; VorticityPhaseSpeed gives the
// classical constant-vorticity result. Sign convention: Ω is dU/dz of the
// current component along the direction the waves travel, so positive Ω means
// the current grows toward the surface in the direction of wave travel.
//
// A camera fixed to a platform sees absolute frequencies. The peak period of
// a record of elevation maps is therefore the absolute one, and
// PhaseSpeedFromPeriod solves the Doppler relation for k before it returns the
// nominal phase speed ω_abs/k that a crest should travel at.
//
// # Spectra and sea state
//
// Welch computes one-sided power spectral densities the way
// scipy.signal.welch does with its defaults (Hann window, 50 % overlap,
// per-segment mean removal, density scaling). SeaStateEstimator streams
// elevation maps one frame at a time: it keeps time series at a sparse set of
// probe points for the frequency spectrum and accumulates a wavenumber
// cross-spectrum of consecutive frames for the mean direction of travel (on
// blocks of cells when the grid is large), so its memory is O(nx·ny) plus a
// few floats per frame. The peak frequency is Young's (1995) weighted
// F_p = ∫ f S⁴ df / ∫ S⁴ df (PeakYoung) with a stated uncertainty; Hm0 is
// measured in the waves' band, with the white noise floor of the
// reconstruction found at the top of the spectrum and removed.
//
// Units are SI and angles are radians, measured counter-clockwise from +x.
package speed
