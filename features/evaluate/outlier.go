package evaluate

import (
	"math"
	"slices"
)

// OutlierScores is, for each vector of others, the distance to its nearest
// vector of recorded (both standardised with recorded's mean and standard
// deviation, an element that does not vary left unscaled) divided by the
// median leave-one-out nearest-neighbour distance among recorded; about 1
// is typical, much more is far from every recording. Every score is NaN
// when recorded has fewer than two vectors, is ragged or holds a value
// that is not finite; a vector of others of another length or with a
// value that is not finite scores NaN. When the median is 0 (recorded
// mostly duplicates) a score is +Inf, or NaN for a duplicate itself.
func OutlierScores(recorded, others [][]float64) []float64 {
	out := make([]float64, len(others))
	p, err := checkRows(recorded, "outlier recorded")
	if err != nil || len(recorded) < 2 {
		for i := range out {
			out[i] = math.NaN()
		}
		return out
	}
	st := newStandardizer(recorded)
	rec := make([][]float64, len(recorded))
	for i, r := range recorded {
		rec[i] = st.apply(r)
	}
	loo := make([]float64, len(rec))
	for i := range rec {
		best := math.Inf(1)
		for j := range rec {
			if j != i {
				best = min(best, sqDist(rec[i], rec[j]))
			}
		}
		loo[i] = math.Sqrt(best)
	}
	slices.Sort(loo)
	n := len(loo)
	med := loo[n/2]
	if n%2 == 0 {
		med = (loo[n/2-1] + loo[n/2]) / 2
	}
	for i, o := range others {
		if len(o) != p || !finite(o) {
			out[i] = math.NaN()
			continue
		}
		v := st.apply(o)
		best := math.Inf(1)
		for _, r := range rec {
			best = min(best, sqDist(v, r))
		}
		out[i] = math.Sqrt(best) / med
	}
	return out
}

func finite(v []float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}
