package calib

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// opencvDocData is Debian's opencv-doc sample folder: chessboard stereo
// pairs left01..14.jpg / right01..14.jpg with 9×6 inner corners (pair 10
// is not shipped).
const opencvDocData = "/usr/share/doc/opencv-doc/examples/data/"

// python runs a script with Debian's /usr/bin/python3 (numpy,
// python3-opencv: the references), giving it the JSON encoding of in as the
// file named by sys.argv[1] and decoding its standard output into out.
func python(t *testing.T, script string, in, out any) {
	t.Helper()
	dir := t.TempDir()
	data, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	inPath := filepath.Join(dir, "in.json")
	if err := os.WriteFile(inPath, data, 0o644); err != nil {
		t.Fatal(err)
	}
	var stdout, stderr bytes.Buffer
	cmd := exec.Command("/usr/bin/python3", "-c", script, inPath)
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Run(); err != nil {
		t.Fatalf("/usr/bin/python3 with numpy and python3-opencv is needed for this check (scripts/setup-deps installs them): %v\n%s", err, stderr.String())
	}
	if err := json.Unmarshal(stdout.Bytes(), out); err != nil {
		t.Fatalf("python output cannot be read: %v\n%s", err, stdout.String())
	}
}

// oneSentence fails unless err is a single-line, single-sentence message
// that mentions every one of want.
func oneSentence(t *testing.T, err error, want ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error; want one mentioning %q", want)
	}
	msg := err.Error()
	if strings.Contains(msg, "\n") || strings.Contains(msg, ". ") || strings.HasSuffix(msg, ".") {
		t.Errorf("error is not one sentence: %q", msg)
	}
	for _, w := range want {
		if !strings.Contains(msg, w) {
			t.Errorf("error %q does not mention %q", msg, w)
		}
	}
}
