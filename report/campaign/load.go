package campaign

import (
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strconv"

	"crestspeed/report"
	"crestspeed/report/summary"
)

// Deployment is one deployment of a campaign: the track folder read
// back, and the files read from it with their checksums (none for a
// deployment made in memory).
type Deployment struct {
	*report.Deployment
	Inputs []summary.FileInfo
}

// Load reads the track folders dirs, in order, with report.LoadDeployment
// (which refuses a missing, truncated or inconsistent folder), and
// describes every file read. A folder given twice, or two folders with
// the same crests.csv (a copy), are refused (ErrDuplicate): pooling a
// deployment twice would count its tracks twice.
func Load(dirs []string) ([]Deployment, error) {
	if len(dirs) == 0 {
		return nil, fmt.Errorf("a campaign needs at least one track folder")
	}
	var out []Deployment
	seen := map[string]string{} // crests.csv checksum → folder
	for _, dir := range dirs {
		d, err := report.LoadDeployment(dir)
		if err != nil {
			return nil, err
		}
		dep := Deployment{Deployment: d}
		for _, name := range report.AllTrackOutputs() {
			p := filepath.Join(dir, name)
			if _, err := os.Stat(p); err != nil {
				continue
			}
			if name == "whitecaps.csv" || name == "lambda.csv" || name == "coverage.csv" {
				if d.Whitecaps == nil {
					continue // not read
				}
			}
			if name == "tracks.csv" {
				continue // not read: the crest rows are
			}
			fi, err := report.DescribeFile(p)
			if err != nil {
				return nil, err
			}
			dep.Inputs = append(dep.Inputs, fi)
			if name == "crests.csv" {
				if first, ok := seen[fi.SHA256]; ok {
					return nil, fmt.Errorf("%w: track folders %s and %s hold the same crests.csv; give each deployment once", ErrDuplicate, first, dir)
				}
				seen[fi.SHA256] = dir
			}
		}
		out = append(out, dep)
	}
	return out, nil
}

// refSetting is a reference setting that deployments of a campaign must
// share: its name in messages and where summary.json records it.
type refSetting struct {
	name string
	// method is the key of the method section, or config the path of the
	// resolved configuration ("track", "speed_window_s").
	method string
	config []string
	// whitecaps: compared only between deployments with whitecaps.
	whitecaps bool
}

// referenceSettings are the settings that define what the ratios are and
// which crests and whitecaps are counted. Those recorded in the method
// section are always compared; configuration values are compared where
// both deployments record them.
var referenceSettings = []refSetting{
	{name: "the steepness definition", method: "steepness"},
	{name: "the peak reference speed c_p", method: "peak_reference"},
	{name: "the local reference speed c_loc", method: "local_reference"},
	{name: "the crest-speed estimator", method: "crest_speed"},
	{name: "the crest-speed window setting track.speed_window_s (0 = Tp/8)", config: []string{"track", "speed_window_s"}},
	{name: "the smallest crest kept, track.min_crest_fraction_hm0", config: []string{"track", "min_crest_fraction_hm0"}},
	{name: "the shortest crest kept, track.min_crest_length_m", config: []string{"track", "min_crest_length_m"}},
	{name: "the smallest whitecap patch kept, track.min_foam_patch_area_m2", config: []string{"track", "min_foam_patch_area_m2"}, whitecaps: true},
	{name: "the foam saturation limit track.foam_saturation_fraction", config: []string{"track", "foam_saturation_fraction"}, whitecaps: true},
}

// value returns the setting as recorded in a summary, quoted for a
// message, and whether it is recorded.
func (r refSetting) value(s *summary.Summary) (string, bool) {
	if r.method != "" {
		v, ok := s.Method[r.method]
		if !ok {
			return "", false
		}
		return strconv.Quote(fmt.Sprint(v)), true
	}
	var cur any = s.Config
	for _, k := range r.config {
		m, ok := cur.(map[string]any)
		if !ok {
			return "", false
		}
		if cur, ok = m[k]; !ok {
			return "", false
		}
	}
	if cur == nil {
		return "", false
	}
	return fmt.Sprint(cur), true
}

// checkSettings compares the reference settings of every deployment with
// those of the first that records them; it returns the settings common to
// all and warnings about settings a deployment does not record.
func checkSettings(deps []Deployment) (common map[string]string, warnings []string, err error) {
	common = map[string]string{}
	for _, r := range referenceSettings {
		firstVal, firstDir, found := "", "", false
		for _, d := range deps {
			if r.whitecaps && d.Whitecaps == nil {
				continue
			}
			v, ok := r.value(d.Summary)
			if !ok {
				if r.method != "" {
					warnings = append(warnings, fmt.Sprintf("track folder %s does not record %s; it is taken to be that of the other deployments", d.TracksDir, r.name))
				}
				continue
			}
			if !found {
				firstVal, firstDir, found = v, d.TracksDir, true
				continue
			}
			if v != firstVal {
				return nil, nil, &SettingError{Folder: d.TracksDir, Setting: r.name, Value: v, First: firstDir, FirstValue: firstVal}
			}
		}
		if found {
			common[r.name] = firstVal
		}
	}
	return common, warnings, nil
}

// campaignBounds returns the steepness classes of the campaign (those
// given, else the first deployment's) and, per deployment, a sentence
// when its rows were classed again into them.
func campaignBounds(deps []Deployment, given []float64) ([]float64, [][]string, error) {
	bounds := given
	if len(bounds) == 0 {
		b, err := deps[0].Summary.SteepnessBounds()
		if err != nil {
			return nil, nil, fmt.Errorf("%s: %w; give the campaign's classes (campaign.steepness_bounds)", filepath.Join(deps[0].TracksDir, "summary.json"), err)
		}
		bounds = b
	}
	conv := make([][]string, len(deps))
	for i, d := range deps {
		b, err := d.Summary.SteepnessBounds()
		switch {
		case err != nil:
			conv[i] = append(conv[i], fmt.Sprintf("track folder %s records no steepness classes; its crest rows are classed by their own S_c into the campaign's classes %v", d.TracksDir, bounds))
		case !reflect.DeepEqual(b, bounds):
			conv[i] = append(conv[i], fmt.Sprintf("track folder %s used the steepness classes %v; its crest and whitecap rows were classed again by their own S_c into the campaign's classes %v, which is exact", d.TracksDir, b, bounds))
		}
	}
	return bounds, conv, nil
}
