package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gopkg.in/yaml.v3"
)

// run executes the CLI in-process and returns stdout, stderr and the error.
func run(t *testing.T, args ...string) (string, string, error) {
	t.Helper()
	var out, errb bytes.Buffer
	app := newApp(&out, &errb)
	root := newRootCmd(app)
	root.SetArgs(args)
	root.SetOut(&out)
	root.SetErr(&errb)
	err := root.Execute()
	return out.String(), errb.String(), err
}

// normal turns a decoded YAML value into a comparable form: every number
// a float64, lists element by element.
func normal(v any) any {
	switch x := v.(type) {
	case int:
		return float64(x)
	case int64:
		return float64(x)
	case uint64:
		return float64(x)
	case float64:
		return x
	case []any:
		out := make([]any, len(x))
		for i := range x {
			out[i] = normal(x[i])
		}
		return out
	}
	return v
}

// The template documents exactly what the tool does: every value in it is
// the default of the package that owns the setting, every setting is in it
// (commented out where it has no default), and it holds nothing else.
func TestTemplateMatchesDefaults(t *testing.T) {
	var tree map[string]any
	if err := yaml.Unmarshal([]byte(configTemplate), &tree); err != nil {
		t.Fatal(err)
	}
	var fromTemplate Config
	if err := decodeInto(tree, &fromTemplate); err != nil {
		t.Fatalf("the template does not decode into the configuration: %v", err)
	}
	defaults := map[string]any{}
	for _, kv := range flatten("", settingsMap(defaultConfig())) {
		defaults[kv.key] = normal(kv.val)
	}
	inTemplate := map[string]bool{}
	for _, kv := range flatten("", tree) {
		inTemplate[kv.key] = true
		want, ok := defaults[kv.key]
		if !ok {
			if kv.val != nil {
				t.Errorf("template sets %s = %v, a setting without a default", kv.key, kv.val)
			}
			continue
		}
		if got := normal(kv.val); fmt.Sprint(got) != fmt.Sprint(want) {
			t.Errorf("template says %s: %v, the default is %v", kv.key, got, want)
		}
	}
	for _, k := range configKeys() {
		if inTemplate[k] {
			continue
		}
		leaf := k[strings.LastIndex(k, ".")+1:]
		if !strings.Contains(configTemplate, "# "+leaf+":") {
			t.Errorf("setting %s is not in config_template.yaml", k)
			continue
		}
		if v, ok := defaults[k]; ok && v != nil && v != "" && v != false && fmt.Sprint(v) != "0" && fmt.Sprint(v) != "[]" {
			t.Errorf("setting %s is commented out in the template but has the default %v", k, v)
		}
	}
}

func TestInitWritesTemplateAndRefusesOverwrite(t *testing.T) {
	p := filepath.Join(t.TempDir(), "c.yaml")
	if _, _, err := run(t, "init", p, "--quiet"); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(p)
	if err != nil || string(b) != configTemplate {
		t.Fatalf("template not written: %v", err)
	}
	if _, _, err := run(t, "init", p); err == nil || !strings.Contains(err.Error(), "--force") {
		t.Fatalf("second init should refuse without --force, got %v", err)
	}
	if _, _, err := run(t, "init", p, "--force", "--quiet"); err != nil {
		t.Fatal(err)
	}
}

func TestConfigErrors(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "bad.yaml")
	os.WriteFile(bad, []byte("track:\n  max_gap_framez: 3\n"), 0o644)
	cases := [][]string{
		{"version", "--config", filepath.Join(dir, "missing.yaml")},
		{"version", "--config", bad},
		{"version", "--workers", "-2"},
	}
	for _, args := range cases {
		_, _, err := run(t, args...)
		if err == nil {
			t.Errorf("%v: no error", args)
			continue
		}
		if exitCode(err) != 2 {
			t.Errorf("%v: exit code %d, want 2", args, exitCode(err))
		}
		if strings.Count(sentence(err), ". ") > 0 {
			t.Errorf("%v: not one sentence: %q", args, sentence(err))
		}
		t.Logf("%v → %s", args, sentence(err))
	}
}

func TestEnvironmentOverridesConfig(t *testing.T) {
	dir := t.TempDir()
	cfgPath := filepath.Join(dir, "c.yaml")
	os.WriteFile(cfgPath, []byte("synthesize:\n  kind: regular\n  grid:\n    nx: 16\n    ny: 8\n    duration_s: 1\n"), 0o644)
	t.Setenv("CRESTSPEED_SYNTHESIZE_REGULAR_HEIGHT_M", "0.5")
	out := filepath.Join(dir, "r.nc")
	if _, _, err := run(t, "synthesize", "--config", cfgPath, "--out", out, "--quiet", "--period", "4"); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(dir, "r.truth.json"))
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	for _, want := range []string{`"kind": "regular"`, `"height_m": 0.5`, `"period_s": 4`, `"nx": 16`} {
		if !strings.Contains(s, want) {
			t.Errorf("truth lacks %s", want)
		}
	}
}

func TestSynthesizeBadSettings(t *testing.T) {
	dir := t.TempDir()
	cases := [][]string{
		{"synthesize", "--out", filepath.Join(dir, "a.nc"), "--fps", "0"},
		{"synthesize", "--out", filepath.Join(dir, "b.nc"), "--depth", "-5"},
		{"synthesize", "--out", filepath.Join(dir, "c.nc"), "--kind", "tsunami"},
		{"synthesize"},
	}
	for _, args := range cases {
		if _, _, err := run(t, append(args, "--quiet")...); err == nil {
			t.Errorf("%v: no error", args)
		} else {
			t.Logf("%v → %s", args, sentence(err))
		}
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 0 {
		t.Errorf("bad settings left files behind: %v", entries)
	}
}
