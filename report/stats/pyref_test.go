package stats

import (
	"testing"

	"crestspeed/internal/pyref"
)

// python runs a reference script: see pyref.JSON.
func python(t *testing.T, script string, in, out any) {
	t.Helper()
	pyref.JSON(t, script, in, out)
}
