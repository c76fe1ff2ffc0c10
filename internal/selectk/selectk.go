// Package selectk finds the k-th smallest value of a slice in linear
// expected time.
package selectk

import "cmp"

// Kth returns the k-th smallest value of v (0 ≤ k < len(v)), reordering v,
// by Hoare's selection with a median-of-three pivot (Hoare 1961, CACM 4,
// 321–322, Algorithm 65 "FIND"). v must hold no NaN.
func Kth[T cmp.Ordered](v []T, k int) T {
	lo, hi := 0, len(v)-1
	for lo < hi {
		mid := lo + (hi-lo)/2
		if v[mid] < v[lo] {
			v[mid], v[lo] = v[lo], v[mid]
		}
		if v[hi] < v[lo] {
			v[hi], v[lo] = v[lo], v[hi]
		}
		if v[hi] < v[mid] {
			v[hi], v[mid] = v[mid], v[hi]
		}
		pivot := v[mid]
		i, j := lo, hi
		for i <= j {
			for v[i] < pivot {
				i++
			}
			for v[j] > pivot {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
}
