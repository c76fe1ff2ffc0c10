package selectk

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// The k-th smallest value must be the k-th element of the sorted slice
// (the standard library's slices.Sort is the reference).
func TestKthMatchesSort(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for n := 1; n <= 60; n++ {
		for trial := 0; trial < 20; trial++ {
			v := make([]float64, n)
			for i := range v {
				v[i] = float64(rng.IntN(8)) // many ties
				if trial%2 == 1 {
					v[i] = rng.NormFloat64()
				}
			}
			want := slices.Clone(v)
			slices.Sort(want)
			for k := 0; k < n; k++ {
				if got := Kth(slices.Clone(v), k); got != want[k] {
					t.Fatalf("n %d trial %d: Kth(%d) = %g, sorted gives %g", n, trial, k, got, want[k])
				}
			}
		}
	}
	f := []float32{3, 1, 2}
	if got := Kth(f, 1); got != 2 {
		t.Fatalf("float32 median of {3, 1, 2} = %g, want 2", got)
	}
}
