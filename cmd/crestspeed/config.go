package main

import (
	_ "embed"
	"fmt"
	"reflect"
	"sort"
	"strings"

	"github.com/go-viper/mapstructure/v2"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
	"github.com/spf13/viper"
	"gopkg.in/yaml.v3"

	"crestspeed/samples"
)

// configTemplate is the commented configuration written by "crestspeed
// init". It is also the single source of the built-in defaults: every
// uncommented leaf in it is registered as a viper default, so the template
// and the defaults cannot drift apart. Settings that are commented out in it
// have no default (their absence means "take it from the data").
//
//go:embed config_template.yaml
var configTemplate string

// Config is the resolved configuration of a run. Keys are the yaml tags.
type Config struct {
	Out         string            `yaml:"out"`
	Workers     int               `yaml:"workers"`
	Quiet       bool              `yaml:"quiet"`
	Force       bool              `yaml:"force"`
	Synthesize  SynthesizeConfig  `yaml:"synthesize"`
	Track       TrackConfig       `yaml:"track"`
	Report      ReportConfig      `yaml:"report"` // defined in report.go
	Demo        DemoConfig        `yaml:"demo"`
	Calibrate   CalibrateConfig   `yaml:"calibrate"`   // defined in calibrate.go
	Reconstruct ReconstructConfig `yaml:"reconstruct"` // defined in reconstruct.go
	// Extra holds the sections of verbs that register themselves from
	// their own files (calibration, reconstruction, ...).
	Extra map[string]any `yaml:",remain"`
}

// SynthesizeConfig configures "crestspeed synthesize".
type SynthesizeConfig struct {
	samples.Scenario `yaml:",squash"`
	Deflate          int `yaml:"deflate"`
}

// TrackConfig configures crest tracking and crest speeds.
type TrackConfig struct {
	Input               string    `yaml:"input"`
	DepthM              *float64  `yaml:"depth_m"`
	DirectionDeg        *float64  `yaml:"direction_deg"`
	CurrentSpeedMPS     float64   `yaml:"current_speed_mps"`
	CurrentDirectionDeg float64   `yaml:"current_direction_deg"`
	VorticityPerS       float64   `yaml:"vorticity_per_s"`
	MinCrestFraction    float64   `yaml:"min_crest_fraction_hm0"`
	MinCrestLengthM     float64   `yaml:"min_crest_length_m"`
	MaxGapFrames        int       `yaml:"max_gap_frames"`
	SpeedWindowS        float64   `yaml:"speed_window_s"`
	SteepnessBounds     []float64 `yaml:"steepness_bounds"`
	BreakingIndex       bool      `yaml:"breaking_index"`
	VelocityWindowS     float64   `yaml:"velocity_window_s"`
	BxThreshold         float64   `yaml:"bx_threshold"`
	Whitecaps           bool      `yaml:"whitecaps"`
	FoamSaturation      float64   `yaml:"foam_saturation_fraction"`
	MinFoamPatchArea    float64   `yaml:"min_foam_patch_area_m2"`
	LambdaBinWidth      float64   `yaml:"lambda_bin_width_mps"`
	BreakingParameter   float64   `yaml:"breaking_parameter_b"`
	Report              bool      `yaml:"report"`
}

// DemoConfig configures "crestspeed demo".
type DemoConfig struct {
	Dir string `yaml:"dir"`
}

// setDefaults registers every uncommented leaf of the template as a default
// and binds every known key to its CRESTSPEED_* environment variable.
func setDefaults(v *viper.Viper) {
	var tree map[string]any
	if err := yaml.Unmarshal([]byte(configTemplate), &tree); err != nil {
		panic("crestspeed: built-in config template is not valid YAML: " + err.Error()) // a build defect, caught by tests
	}
	for _, kv := range flatten("", tree) {
		v.SetDefault(kv.key, kv.val)
	}
	for _, k := range configKeys() {
		_ = v.BindEnv(k)
	}
}

type keyVal struct {
	key string
	val any
}

func flatten(prefix string, m map[string]any) []keyVal {
	var out []keyVal
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		full := k
		if prefix != "" {
			full = prefix + "." + k
		}
		if sub, ok := m[k].(map[string]any); ok {
			out = append(out, flatten(full, sub)...)
			continue
		}
		out = append(out, keyVal{full, m[k]})
	}
	return out
}

// configKeys lists every leaf key of Config, from its yaml tags.
func configKeys() []string {
	var keys []string
	var walk func(prefix string, t reflect.Type)
	walk = func(prefix string, t reflect.Type) {
		for i := 0; i < t.NumField(); i++ {
			f := t.Field(i)
			tag := f.Tag.Get("yaml")
			name, opts, _ := strings.Cut(tag, ",")
			if name == "" {
				name = strings.ToLower(f.Name)
			}
			if opts == "remain" || tag == "-" || !f.IsExported() {
				continue
			}
			ft := f.Type
			if ft.Kind() == reflect.Pointer {
				ft = ft.Elem()
			}
			if opts == "squash" || opts == "inline" {
				walk(prefix, ft)
				continue
			}
			full := name
			if prefix != "" {
				full = prefix + "." + name
			}
			if ft.Kind() == reflect.Struct {
				walk(full, ft)
				continue
			}
			keys = append(keys, full)
		}
	}
	walk("", reflect.TypeOf(Config{}))
	return keys
}

// decodeConfig turns viper's merged settings into a Config, refusing
// unknown keys so that a misspelt setting is an error, not a silent default.
func decodeConfig(v *viper.Viper) (*Config, error) {
	var cfg Config
	var md mapstructure.Metadata
	err := v.Unmarshal(&cfg, func(c *mapstructure.DecoderConfig) {
		c.TagName = "yaml"
		c.Metadata = &md
		c.WeaklyTypedInput = true
		c.DecodeHook = mapstructure.ComposeDecodeHookFunc(
			mapstructure.StringToSliceHookFunc(","),
		)
	})
	if err != nil {
		return nil, fmt.Errorf("configuration cannot be read: %v", err)
	}
	if len(md.Unused) > 0 {
		sort.Strings(md.Unused)
		return nil, fmt.Errorf("configuration has unknown setting %q; see \"crestspeed init\" for the settings there are", md.Unused[0])
	}
	for k := range cfg.Extra {
		if !knownExtraSection[k] {
			return nil, fmt.Errorf("configuration has an unknown section or key %q; see \"crestspeed init\" for the settings there are", k)
		}
	}
	return &cfg, nil
}

// knownExtraSection lists config sections owned by verbs in their own files.
var knownExtraSection = map[string]bool{}

// bindFlag makes a command flag override a configuration key when the user
// sets it. Flags that are not given leave the key to the environment, the
// config file or the default.
func bindFlag(app *App, cmd *cobra.Command, flag, key string) {
	f := cmd.Flags().Lookup(flag)
	if f == nil {
		panic("crestspeed: no flag " + flag) // a wiring defect, caught by tests
	}
	prev := cmd.PreRunE
	cmd.PreRunE = func(c *cobra.Command, args []string) error {
		if prev != nil {
			if err := prev(c, args); err != nil {
				return err
			}
		}
		return applyFlag(app, f, key)
	}
}

func applyFlag(app *App, f *pflag.Flag, key string) error {
	if !f.Changed {
		return nil
	}
	app.V.Set(key, f.Value.String())
	if sv, ok := f.Value.(pflag.SliceValue); ok {
		app.V.Set(key, sv.GetSlice())
	}
	cfg, err := decodeConfig(app.V)
	if err != nil {
		return usageError{fmt.Errorf("--%s: %v", f.Name, err)}
	}
	workers := app.cfg.Workers
	*app.cfg = *cfg
	app.cfg.Workers = workers
	return nil
}
