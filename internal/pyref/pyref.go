// Package pyref runs reference computations for tests in Debian's
// /usr/bin/python3 (numpy, scipy, netCDF4, xarray, python3-opencv, all
// installed by scripts/setup-deps). Call it by that full path: a python3
// earlier on PATH may lack the modules.
package pyref

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// Python is the interpreter the references run in.
const Python = "/usr/bin/python3"

// JSON runs script, handing it the JSON encoding of in both on standard
// input and as the file named by sys.argv[1], and decodes the JSON the
// script prints into out. Any failure fails the test: the references are
// part of the check, not optional.
func JSON(t testing.TB, script string, in, out any) {
	t.Helper()
	data, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	inPath := filepath.Join(t.TempDir(), "in.json")
	if err := os.WriteFile(inPath, data, 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	cmd := exec.Command(Python, "-c", script, inPath)
	cmd.Stdin = bytes.NewReader(data)
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s with numpy, scipy and python3-opencv is needed for this check (scripts/setup-deps installs them): %v\n%s", Python, err, stderr.String())
	}
	if err := json.Unmarshal(stdout.Bytes(), out); err != nil {
		t.Fatalf("python reference output cannot be read: %v\n%s", err, stdout.String())
	}
}
