package summary

import (
	"bytes"
	"encoding/json"
	"fmt"

	"crestspeed/report/stats"
)

// Campaign is the summary.json of a campaign report: provenance (tool,
// configuration, every input file with its checksum), the settings the
// deployments share and those converted, the campaign block with each
// deployment and the pooled statistics, the method, timings and the path
// of every output.
type Campaign struct {
	Tool     map[string]string  `json:"tool"`
	Caution  string             `json:"caution"`
	Warnings []string           `json:"warnings"`
	Config   any                `json:"config"`
	Inputs   []FileInfo         `json:"inputs"`
	Settings CampaignSettings   `json:"settings"`
	Campaign CampaignBlock      `json:"campaign"`
	Method   map[string]any     `json:"method"`
	Timings  map[string]float64 `json:"timings_s"`
	Outputs  map[string]string  `json:"outputs"`
}

// CampaignSettings are the settings a campaign was computed with.
type CampaignSettings struct {
	// SteepnessBounds are the inner boundaries of the S_c classes.
	SteepnessBounds []float64 `json:"steepness_bounds"`
	// Reference are the reference settings every deployment shares, by
	// name (the definitions of S_c, c_p and c_loc, the crest-speed fit).
	Reference map[string]string `json:"reference"`
	// Conversions say, one sentence each, what was converted exactly to
	// pool deployments whose settings differ.
	Conversions        []string `json:"conversions"`
	BootstrapResamples int      `json:"bootstrap_resamples"`
	BootstrapSeed      uint64   `json:"bootstrap_seed"`
	Resampling         string   `json:"resampling"`
	MinClassTracks     int      `json:"min_class_tracks"`
	LambdaBinWidth     float64  `json:"lambda_bin_width"`
	LambdaMaxRatio     float64  `json:"lambda_max_ratio"`
	WindSpeedAttribute string   `json:"wind_speed_attribute"`
}

// CampaignBlock is the "campaign" block of summary.json.
type CampaignBlock struct {
	Deployments []DeploymentSummary `json:"deployments"`
	Counts      CampaignCounts      `json:"counts"`
	// CrestRatio are the pooled statistics of c_cr/c_p ("peak") and
	// c_cr/c_loc ("local") by steepness class, intervals from the
	// stratified bootstrap.
	CrestRatio map[string]stats.RatioStats `json:"crest_speed_ratio"`
	// FrontRatio are those of c_br/c_p and c_br/c_loc over the deployments
	// with whitecaps (absent when none has any).
	FrontRatio map[string]stats.RatioStats `json:"front_speed_ratio,omitempty"`
	// Lambda is the pooled Λ(c/c_p) (absent without whitecaps).
	Lambda *LambdaNormalised `json:"lambda_normalised,omitempty"`
	// PeakSteepness and WaveAge say how the ratios are set against the
	// sea state across deployments, and when a wind speed is not recorded.
	PeakSteepness string `json:"peak_steepness"`
	WaveAge       string `json:"wave_age"`
}

// CampaignCounts counts the pooled sample.
type CampaignCounts struct {
	Deployments             int `json:"deployments"`
	DeploymentsWithWhitecap int `json:"deployments_with_whitecaps"`
	CrestTracks             int `json:"crest_tracks"`
	CrestRows               int `json:"crest_rows"`
	CrestRowsWithSpeed      int `json:"crest_rows_with_speed"`
	Whitecaps               int `json:"whitecaps"`
	WhitecapRows            int `json:"whitecap_rows"`
	FramesRead              int `json:"frames_read"`
}

// DeploymentSummary is one deployment of a campaign.
type DeploymentSummary struct {
	Index          int     `json:"index"`
	Folder         string  `json:"track_folder"`
	Site           string  `json:"site"`
	StartUTC       string  `json:"start_utc"`
	EndUTC         string  `json:"end_utc"`
	DurationS      float64 `json:"duration_s"`
	FramesRead     int     `json:"frames_read"`
	Hm0            float64 `json:"hm0_m"`
	Tp             float64 `json:"tp_s"`
	PeakPhaseSpeed float64 `json:"peak_phase_speed_mps"`
	// PeakSpeedUncertainty is the relative standard uncertainty of c_p
	// (null when unknown).
	PeakSpeedUncertainty float64 `json:"peak_phase_speed_relative_uncertainty"`
	PeakWavelength       float64 `json:"peak_wavelength_m"`
	MeanDirection        float64 `json:"mean_direction_deg"`
	Depth                float64 `json:"depth_m"`
	PeakSteepness        float64 `json:"peak_steepness"`
	WindSpeed            float64 `json:"wind_speed_mps"`
	WaveAge              float64 `json:"wave_age"`
	CrestTracks          int     `json:"crest_tracks"`
	CrestRows            int     `json:"crest_rows"`
	CrestRowsWithSpeed   int     `json:"crest_rows_with_speed"`
	HasWhitecaps         bool    `json:"has_whitecaps"`
	WhitecapTracks       int     `json:"whitecap_tracks"`
	WhitecapRows         int     `json:"whitecap_rows"`
	// CrestRatio and FrontRatio are the deployment's own statistics on the
	// campaign's classes, intervals resampling its tracks.
	CrestRatio map[string]stats.RatioStats `json:"crest_speed_ratio"`
	FrontRatio map[string]stats.RatioStats `json:"front_speed_ratio,omitempty"`
	Lambda     *LambdaNormalised           `json:"lambda_normalised,omitempty"`
	// RecordInputs are the input files of the deployment's tracking run,
	// as its summary.json lists them.
	RecordInputs []FileInfo `json:"record_inputs"`
	// Conversions say what was converted for this deployment.
	Conversions []string `json:"conversions"`
}

// LambdaNormalised is Phillips's Λ against c/c_p: Λ̂(ĉ) = c_p Λ(c_p ĉ),
// breaking-front length per unit area per unit ĉ, m⁻¹ (see Jacobian).
type LambdaNormalised struct {
	Jacobian string  `json:"jacobian"`
	BinWidth float64 `json:"bin_width"`
	// Frames are the analysed frames averaged over (summed over the
	// deployments for the pooled curve).
	Frames int              `json:"frames"`
	Bins   []LambdaRatioBin `json:"bins"`
	// Integral is ∫ Λ̂ dĉ over the bins, m⁻¹; OutOfRange the front length
	// per frame with ĉ outside them, m.
	Integral   float64 `json:"integral_per_m"`
	OutOfRange float64 `json:"front_length_out_of_bins_m"`
}

// LambdaRatioBin is one bin [Lo, Hi) of c/c_p.
type LambdaRatioBin struct {
	Lo     float64 `json:"ratio_min"`
	Hi     float64 `json:"ratio_max"`
	Lambda float64 `json:"lambda_per_m"`
	Fronts int     `json:"front_samples"`
}

// JSON encodes the campaign summary, indented, with NaN written as null.
func (s *Campaign) JSON() ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(jsonSafe(s)); err != nil {
		return nil, fmt.Errorf("campaign summary cannot be encoded: %w", err)
	}
	return buf.Bytes(), nil
}
