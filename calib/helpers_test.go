package calib

import (
	"strings"
	"testing"

	"crestspeed/internal/pyref"
)

// opencvDocData is Debian's opencv-doc sample folder: chessboard stereo
// pairs left01..14.jpg / right01..14.jpg with 9×6 inner corners (pair 10
// is not shipped).
const opencvDocData = "/usr/share/doc/opencv-doc/examples/data/"

// python runs a reference script: see pyref.JSON.
func python(t *testing.T, script string, in, out any) {
	t.Helper()
	pyref.JSON(t, script, in, out)
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
