package report

import (
	"math"
	"testing"

	"crestspeed/internal/pyref"
)

// python runs a reference script: see pyref.JSON.
func python(t *testing.T, script string, in, out any) {
	t.Helper()
	pyref.JSON(t, script, in, out)
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
