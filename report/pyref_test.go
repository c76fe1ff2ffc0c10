package report

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"testing"
)

// python runs a script with Debian's /usr/bin/python3 (numpy, scipy,
// xarray), feeding in as JSON on stdin and decoding the JSON it prints
// into out. The test is skipped when that interpreter is missing.
func python(t *testing.T, script string, in, out any) {
	t.Helper()
	if _, err := os.Stat("/usr/bin/python3"); err != nil {
		t.Skip("/usr/bin/python3 is not installed (scripts/setup-deps installs it)")
	}
	b, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command("/usr/bin/python3", "-c", script)
	cmd.Stdin = bytes.NewReader(b)
	var so, se bytes.Buffer
	cmd.Stdout, cmd.Stderr = &so, &se
	if err := cmd.Run(); err != nil {
		t.Fatalf("python reference failed: %v\n%s", err, se.String())
	}
	if err := json.Unmarshal(so.Bytes(), out); err != nil {
		t.Fatalf("python reference output %q: %v", so.String(), err)
	}
}

// nanJSON maps NaN to nil for encoding.
func nanJSON(v []float64) []any {
	out := make([]any, len(v))
	for i, x := range v {
		if !math.IsNaN(x) {
			out[i] = x
		}
	}
	return out
}
