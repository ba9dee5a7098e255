package evaluate

import (
	"math"
	"math/rand/v2"
	"slices"
)

// Interval is a confidence interval [Lo, Hi]; both are NaN when it cannot
// be formed.
type Interval struct{ Lo, Hi float64 }

// groups splits the clips of s into normal and anomalous groups (indices
// into s), each list in the order of the group names so that the result
// does not depend on the order of s beyond the order inside a group.
func groups(s []Scored) (normal, anomalous [][]int) {
	type key struct {
		anomalous bool
		group     string
	}
	idx := map[key][]int{}
	for i, c := range s {
		k := key{c.Anomalous, c.Group}
		idx[k] = append(idx[k], i)
	}
	var names [2][]string
	for k := range idx {
		if k.anomalous {
			names[1] = append(names[1], k.group)
		} else {
			names[0] = append(names[0], k.group)
		}
	}
	for a := range names {
		slices.Sort(names[a])
		for _, g := range names[a] {
			list := idx[key{a == 1, g}]
			if a == 1 {
				anomalous = append(anomalous, list)
			} else {
				normal = append(normal, list)
			}
		}
	}
	return normal, anomalous
}

// BootstrapCI is the percentile interval of metric over rounds resamples of
// whole groups: the normal groups and the anomalous groups are each drawn
// with replacement, as many as there are, so every resample keeps both
// classes. A group is the clips sharing Group and Anomalous. Randomness is
// a PCG seeded with seed, so the interval is a function of its arguments.
// Resamples where metric is NaN are left out; the interval is NaN when
// none is left, when a class is empty, rounds < 1 or level is outside
// (0, 1). The quantiles interpolate linearly between order statistics
// (numpy's default "linear" method) at (1 − level)/2 and (1 + level)/2.
func BootstrapCI(s []Scored, metric func([]Scored) float64, rounds int, level float64, seed uint64) Interval {
	return bootstrap([][]Scored{s}, func(r [][]Scored) float64 { return metric(r[0]) }, rounds, level, seed)
}

// BootstrapDiffCI is the percentile interval of metric(b) − metric(a) over
// rounds paired resamples: a and b score the same clips in the same order
// (the same Anomalous and Group, e.g. one detector trained two ways), and
// each resample draws the same groups from both. The grouping is read from
// a; otherwise it behaves as BootstrapCI. It is NaN when a and b differ in
// length or labels.
func BootstrapDiffCI(a, b []Scored, metric func([]Scored) float64, rounds int, level float64, seed uint64) Interval {
	nan := Interval{math.NaN(), math.NaN()}
	if len(a) != len(b) {
		return nan
	}
	for i := range a {
		if a[i].Anomalous != b[i].Anomalous || a[i].Group != b[i].Group {
			return nan
		}
	}
	return bootstrap([][]Scored{a, b}, func(r [][]Scored) float64 { return metric(r[1]) - metric(r[0]) }, rounds, level, seed)
}

// bootstrap resamples the groups of sets[0] and applies the same draw to
// every set.
func bootstrap(sets [][]Scored, stat func([][]Scored) float64, rounds int, level float64, seed uint64) Interval {
	nan := Interval{math.NaN(), math.NaN()}
	if rounds < 1 || !(level > 0 && level < 1) || len(sets) == 0 {
		return nan
	}
	normal, anomalous := groups(sets[0])
	if len(normal) == 0 || len(anomalous) == 0 {
		return nan
	}
	// The second PCG word is a fixed constant so that one seed is enough.
	rng := rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15))
	buf := make([][]Scored, len(sets))
	vals := make([]float64, 0, rounds)
	for range rounds {
		for k := range buf {
			buf[k] = buf[k][:0]
		}
		for _, class := range [][][]int{normal, anomalous} {
			for range class {
				g := class[rng.IntN(len(class))]
				for k, s := range sets {
					for _, i := range g {
						buf[k] = append(buf[k], s[i])
					}
				}
			}
		}
		if v := stat(buf); !math.IsNaN(v) {
			vals = append(vals, v)
		}
	}
	if len(vals) == 0 {
		return nan
	}
	slices.Sort(vals)
	return Interval{quantile(vals, (1-level)/2), quantile(vals, (1+level)/2)}
}

// quantile of sorted v at q in [0, 1], linear between order statistics.
func quantile(v []float64, q float64) float64 {
	h := q * float64(len(v)-1)
	i := int(math.Floor(h))
	if i >= len(v)-1 {
		return v[len(v)-1]
	}
	return v[i] + (h-float64(i))*(v[i+1]-v[i])
}
