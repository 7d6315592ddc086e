package robust

import (
	"cmp"
	"math/bits"
	"slices"
)

// sortBelow is the part size below which SelectKth sorts: sorting beats
// partitioning on a few values.
const sortBelow = 16

// SelectKth reorders v so that v[k] holds the value it would hold sorted,
// with no larger value before it and no smaller after, and returns it
// (Hoare's quickselect with a median-of-three pivot; a part whose
// partitions stay lopsided is sorted, so the worst case is n log n).
// v must not be empty and 0 <= k < len(v).
func SelectKth[T cmp.Ordered](v []T, k int) T {
	lo, hi := 0, len(v)-1
	for budget := 2 * bits.Len(uint(len(v))); hi > lo; budget-- {
		if budget == 0 || hi-lo < sortBelow {
			slices.Sort(v[lo : hi+1])
			break
		}
		m := lo + (hi-lo)/2
		if v[m] < v[lo] {
			v[m], v[lo] = v[lo], v[m]
		}
		if v[hi] < v[lo] {
			v[hi], v[lo] = v[lo], v[hi]
		}
		if v[hi] < v[m] {
			v[hi], v[m] = v[m], v[hi]
		}
		p := v[m]
		i, j := lo, hi
		for i <= j {
			for v[i] < p {
				i++
			}
			for v[j] > p {
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
