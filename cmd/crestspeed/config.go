package main

import (
	_ "embed"
	"errors"
	"fmt"
	"math"
	"os"
	"reflect"
	"runtime"
	"sort"
	"strconv"
	"strings"

	"github.com/go-viper/mapstructure/v2"
	"github.com/spf13/cobra"
	"github.com/spf13/viper"
	"gopkg.in/yaml.v3"

	"crestspeed/ingest"
	"crestspeed/internal/slurm"
	"crestspeed/samples"
	"crestspeed/speed/analysis"
)

// configTemplate is the commented configuration written by "crestspeed
// init". The defaults themselves live with the packages that use them
// (analysis.DefaultOptions, samples.DefaultScenario, ...); a test checks
// that every value in the template equals the package default, so the
// template documents exactly what the tool does.
//
//go:embed config_template.yaml
var configTemplate string

// Config is the configuration of a run. Keys are the yaml tags; each
// section is the options type of the package that does the work, plus the
// inputs of the verb.
type Config struct {
	Out         string            `yaml:"out"`
	Workers     int               `yaml:"workers"`
	Quiet       bool              `yaml:"quiet"`
	Force       bool              `yaml:"force"`
	Site        SiteConfig        `yaml:"site"`
	Synthesize  SynthesizeConfig  `yaml:"synthesize"`
	Track       TrackConfig       `yaml:"track"`
	Report      ReportConfig      `yaml:"report"`
	Campaign    CampaignConfig    `yaml:"campaign"`
	Demo        DemoConfig        `yaml:"demo"`
	Calibrate   CalibrateConfig   `yaml:"calibrate"`
	Reconstruct ReconstructConfig `yaml:"reconstruct"`
	Grid        GridConfig        `yaml:"grid"`
	Run         RunConfig         `yaml:"run"`
	Slurm       slurm.Options     `yaml:"slurm"`
}

// SynthesizeConfig configures "crestspeed synthesize".
type SynthesizeConfig struct {
	samples.Scenario `yaml:",inline"`
	Deflate          int `yaml:"deflate"`
}

// TrackConfig configures "crestspeed track": the record analysis, plus the
// verb's input, the steepness classes of the statistics and whether the
// report follows.
type TrackConfig struct {
	Input                   string      `yaml:"input"`
	SteepnessBounds         []float64   `yaml:"steepness_bounds"`
	Report                  bool        `yaml:"report"`
	Gauge                   GaugeConfig `yaml:"gauge"`
	ingest.ElevationOptions `yaml:",inline"`
	analysis.Options        `yaml:",inline"`
	// dominantPass marks the dominant-wave analysis that track runs into
	// DIR/dominant beside the analysis of every wave.
	dominantPass bool
}

// DemoConfig configures "crestspeed demo".
type DemoConfig struct {
	Dir string `yaml:"dir"`
}

// defaultConfig is the configuration with every default, taken from the
// packages that own the settings.
func defaultConfig() Config {
	return Config{
		Synthesize: SynthesizeConfig{Scenario: samples.DefaultScenario(), Deflate: 4},
		Track: TrackConfig{
			SteepnessBounds:  []float64{0.1, 0.2}, // common practice; see the template
			Report:           true,
			ElevationOptions: ingest.DefaultElevationOptions(),
			Options:          analysis.DefaultOptions(),
		},
		Report:      defaultReportConfig(),
		Campaign:    defaultCampaignConfig(),
		Demo:        DemoConfig{Dir: "demo-output"},
		Calibrate:   defaultCalibrateConfig(),
		Reconstruct: defaultReconstructConfig(),
		Grid:        defaultGridConfig(),
		Slurm:       slurm.DefaultOptions(),
	}
}

// settingsMap encodes a configuration as the nested map of its keys, with
// typed values (numbers stay numbers): the form recorded in summary.json.
func settingsMap(c Config) map[string]any {
	b, err := yaml.Marshal(c)
	if err != nil {
		panic("crestspeed: configuration cannot be encoded: " + err.Error()) // a type defect, caught by tests
	}
	var m map[string]any
	if err := yaml.Unmarshal(b, &m); err != nil {
		panic("crestspeed: configuration cannot be decoded: " + err.Error())
	}
	return m
}

type keyVal struct {
	key string
	val any
}

// flatten lists the leaves of a nested map as dotted keys, sorted.
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
			if tag == "-" || !f.IsExported() {
				continue
			}
			if name == "" {
				name = strings.ToLower(f.Name)
			}
			ft := f.Type
			if ft.Kind() == reflect.Pointer {
				ft = ft.Elem()
			}
			if strings.Contains(opts, "inline") {
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

// envName is the environment variable of a configuration key.
func envName(key string) string {
	return "CRESTSPEED_" + strings.ToUpper(strings.ReplaceAll(key, ".", "_"))
}

// decodeInto decodes viper's merged settings (or a plain map) into cfg,
// refusing unknown keys so that a misspelt setting is an error, not a
// silent default.
func decodeInto(input any, cfg *Config) error {
	var md mapstructure.Metadata
	dec, err := mapstructure.NewDecoder(&mapstructure.DecoderConfig{
		TagName:          "yaml",
		SquashTagOption:  "inline",
		Metadata:         &md,
		WeaklyTypedInput: true,
		Result:           cfg,
		DecodeHook: mapstructure.ComposeDecodeHookFunc(
			wholeNumbers,
			mapstructure.StringToSliceHookFunc(","),
		),
	})
	if err != nil {
		return err
	}
	if err := dec.Decode(input); err != nil {
		return err
	}
	if len(md.Unused) > 0 {
		sort.Strings(md.Unused)
		return fmt.Errorf("%q is not a setting; \"crestspeed init\" writes every setting there is", md.Unused[0])
	}
	return nil
}

// wholeNumbers refuses a fractional number for a whole-number setting
// (mapstructure would truncate 2.5 frames to 2 without a word).
func wholeNumbers(from, to reflect.Type, data any) (any, error) {
	switch to.Kind() {
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
	default:
		return data, nil
	}
	var f float64
	switch v := data.(type) {
	case float64:
		f = v
	case float32:
		f = float64(v)
	case string:
		p, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil {
			return data, nil // not a number: the decoder says so
		}
		f = p
	default:
		return data, nil
	}
	if f != math.Trunc(f) || math.IsInf(f, 0) || math.IsNaN(f) {
		return nil, fmt.Errorf("%v is not a whole number", data)
	}
	return int64(f), nil
}

// decodeConfig turns viper's merged settings into a Config.
func decodeConfig(v *viper.Viper) (*Config, error) {
	var cfg Config
	if err := decodeInto(v.AllSettings(), &cfg); err != nil {
		return nil, fmt.Errorf("configuration cannot be read: %w", err)
	}
	return &cfg, nil
}

// nested turns a dotted key and its value into a nested map.
func nested(key string, val any) map[string]any {
	parts := strings.Split(key, ".")
	m := map[string]any{parts[len(parts)-1]: val}
	for i := len(parts) - 2; i >= 0; i-- {
		m = map[string]any{parts[i]: m}
	}
	return m
}

// checkEnvironment refuses CRESTSPEED_* variables that name no setting or
// hold a value of the wrong kind, naming the variable.
func checkEnvironment() error {
	known := map[string]string{}
	for _, k := range configKeys() {
		known[envName(k)] = k
	}
	var names []string
	for _, kv := range os.Environ() {
		name, _, _ := strings.Cut(kv, "=")
		if strings.HasPrefix(name, "CRESTSPEED_") {
			names = append(names, name)
		}
	}
	sort.Strings(names)
	for _, name := range names {
		key, ok := known[name]
		if !ok {
			return usageError{fmt.Errorf("environment variable %s names no setting; unset it, or see \"crestspeed init\" for the settings (variable names are CRESTSPEED_<SECTION>_<KEY>)", name)}
		}
		var c Config
		if err := decodeInto(nested(key, os.Getenv(name)), &c); err != nil {
			return usageError{fmt.Errorf("environment variable %s=%q does not fit setting %s: %v", name, os.Getenv(name), key, cause(err))}
		}
	}
	return nil
}

// cause turns a decoding error of mapstructure ("decoding failed due to
// the following error(s):\n\n'track.x' cannot parse ...") into one clause
// ("track.x: cannot parse ..."), the first when there are several.
func cause(err error) string {
	s := strings.TrimSpace(err.Error())
	if i := strings.Index(s, "\n\n"); i >= 0 {
		s = strings.TrimSpace(s[i+2:])
	}
	if i := strings.IndexByte(s, '\n'); i >= 0 {
		s = s[:i]
	}
	s = strings.TrimPrefix(s, "* ")
	if strings.HasPrefix(s, "'") {
		if j := strings.Index(s[1:], "'"); j >= 0 {
			s = s[1:j+1] + ":" + s[j+2:]
		}
	}
	return s
}

// binding ties a flag of a command to configuration keys.
type binding struct {
	flag string
	keys []string
}

// bindFlag makes a flag of cmd set the configuration keys when (and only
// when) it is given. The binding is made when cmd runs, so commands that
// share a key do not steal each other's flags.
func (app *App) bindFlag(cmd *cobra.Command, flag string, keys ...string) {
	if cmd.Flags().Lookup(flag) == nil {
		panic("crestspeed: no flag " + flag) // a wiring defect, caught by tests
	}
	if app.bindings == nil {
		app.bindings = map[*cobra.Command][]binding{}
	}
	app.bindings[cmd] = append(app.bindings[cmd], binding{flag, keys})
}

// load builds the configuration of the command about to run: defaults from
// the packages, then the config file, then CRESTSPEED_* variables, then
// the flags that were given.
func (app *App) load(cmd *cobra.Command) error {
	v := app.V
	for _, kv := range flatten("", settingsMap(defaultConfig())) {
		v.SetDefault(kv.key, kv.val)
	}
	for _, k := range configKeys() {
		_ = v.BindEnv(k, envName(k))
	}
	if err := checkEnvironment(); err != nil {
		return err
	}
	if f, _ := cmd.Flags().GetString("config"); f != "" {
		if err := readConfigFile(v, f); err != nil {
			return err
		}
	}
	// Only the flags that were given are bound: viper would otherwise
	// fall back to an unchanged flag's zero default for settings that
	// have none (depth_m: "from the file").
	bound := append([]binding{{"out", []string{"out"}}, {"workers", []string{"workers"}},
		{"quiet", []string{"quiet"}}, {"force", []string{"force"}}}, app.bindings[cmd]...)
	for _, b := range bound {
		f := cmd.Flags().Lookup(b.flag)
		if f == nil || !f.Changed {
			continue
		}
		for _, k := range b.keys {
			if err := v.BindPFlag(k, f); err != nil {
				return err
			}
		}
	}
	cfg, err := decodeConfig(v)
	if err != nil {
		return usageError{err}
	}
	if cfg.Workers < 0 || cfg.Workers > 1024 {
		return usageError{fmt.Errorf("workers %d is outside 0–1024 (0 = one per CPU core)", cfg.Workers)}
	}
	if cfg.Workers == 0 {
		cfg.Workers = runtime.NumCPU()
	}
	app.cfg = cfg
	app.con.quiet = cfg.Quiet
	return nil
}

// readConfigFile merges a YAML configuration file into v, refusing it when
// it cannot be read or holds a setting that does not exist.
func readConfigFile(v *viper.Viper, path string) error {
	b, err := os.ReadFile(path)
	if errors.Is(err, os.ErrNotExist) {
		return usageError{fmt.Errorf("config file %s does not exist; write one with \"crestspeed init\"", path)}
	}
	if err != nil {
		return usageError{fmt.Errorf("config file %s cannot be read: %w", path, err)}
	}
	var m map[string]any
	if err := yaml.Unmarshal(b, &m); err != nil {
		return usageError{fmt.Errorf("config file %s is not valid YAML: %v", path, err)}
	}
	if err := namedKeys(m, ""); err != nil {
		return usageError{fmt.Errorf("config file %s: %w", path, err)}
	}
	var c Config
	if err := decodeInto(m, &c); err != nil {
		return usageError{fmt.Errorf("config file %s: %s", path, cause(err))}
	}
	if err := v.MergeConfigMap(m); err != nil {
		return usageError{fmt.Errorf("config file %s cannot be read: %w", path, err)}
	}
	return nil
}

// namedKeys checks that every key of a configuration tree is a name (YAML
// allows numbers, nulls and lists as keys; the configuration does not),
// turning maps with such keys into errors.
func namedKeys(m map[string]any, prefix string) error {
	for k, v := range m {
		full := k
		if prefix != "" {
			full = prefix + "." + k
		}
		switch sub := v.(type) {
		case map[string]any:
			if err := namedKeys(sub, full); err != nil {
				return err
			}
		case map[any]any:
			for kk := range sub {
				if _, ok := kk.(string); !ok {
					return fmt.Errorf("the key %v under %s is not a setting name", kk, full)
				}
			}
			return fmt.Errorf("the section %s cannot be read", full)
		case []any:
			for i, e := range sub {
				if em, ok := e.(map[string]any); ok {
					if err := namedKeys(em, fmt.Sprintf("%s[%d]", full, i)); err != nil {
						return err
					}
				}
				if _, ok := e.(map[any]any); ok {
					return fmt.Errorf("an entry of %s has a key that is not a setting name", full)
				}
			}
		}
	}
	return nil
}

// flagGiven reports whether the named flag was given on the command line.
func flagGiven(cmd *cobra.Command, name string) bool {
	f := cmd.Flags().Lookup(name)
	return f != nil && f.Changed
}
