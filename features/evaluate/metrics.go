package evaluate

import (
	"cmp"
	"math"
	"slices"
)

// Scored is one scored clip.
type Scored struct {
	Score     float64
	Anomalous bool
	Group     string // recording group: the bootstrap resamples whole groups
}

// counts returns the number of normal and anomalous clips and whether
// every score is a number.
func counts(s []Scored) (neg, pos int, finite bool) {
	finite = true
	for _, c := range s {
		if c.Anomalous {
			pos++
		} else {
			neg++
		}
		if math.IsNaN(c.Score) {
			finite = false
		}
	}
	return neg, pos, finite
}

// AUC is the area under the ROC curve: the Mann–Whitney U of the anomalous
// scores against the normal ones divided by n_neg·n_pos, ties counting one
// half. It is NaN when a class is empty or a score is NaN.
func AUC(s []Scored) float64 {
	neg, pos, ok := counts(s)
	if neg == 0 || pos == 0 || !ok {
		return math.NaN()
	}
	// Walk the scores in ascending order; within a run of equal scores each
	// anomalous clip beats every normal clip below the run and ties with
	// the normal clips inside it.
	o := sortedByScore(s)
	var u float64
	below := 0 // normal clips with a smaller score
	for i := 0; i < len(o); {
		j := i
		n, p := 0, 0
		for ; j < len(o) && o[j].Score == o[i].Score; j++ {
			if o[j].Anomalous {
				p++
			} else {
				n++
			}
		}
		u += float64(p) * (float64(below) + 0.5*float64(n))
		below += n
		i = j
	}
	return u / (float64(neg) * float64(pos))
}

// sortedByScore returns a copy of s in ascending score order.
func sortedByScore(s []Scored) []Scored {
	o := slices.Clone(s)
	slices.SortStableFunc(o, func(a, b Scored) int { return cmp.Compare(a.Score, b.Score) })
	return o
}

// ROC returns the curve's points from (0,0) to (1,1), ties grouped: the
// threshold steps down through the distinct scores, and a run of equal
// scores is one point, so the curve crosses a tie run on a straight line
// (the trapezoid that gives the tie its half). Both are nil when a class is
// empty or a score is NaN.
func ROC(s []Scored) (fpr, tpr []float64) {
	neg, pos, ok := counts(s)
	if neg == 0 || pos == 0 || !ok {
		return nil, nil
	}
	o := sortedByScore(s)
	fpr, tpr = []float64{0}, []float64{0}
	fp, tp := 0, 0
	for j := len(o) - 1; j >= 0; {
		i := j
		for ; i >= 0 && o[i].Score == o[j].Score; i-- {
			if o[i].Anomalous {
				tp++
			} else {
				fp++
			}
		}
		fpr = append(fpr, float64(fp)/float64(neg))
		tpr = append(tpr, float64(tp)/float64(pos))
		j = i
	}
	return fpr, tpr
}

// PartialAUC is the area under the ROC for FPR in [0, maxFPR] (linear
// interpolation at maxFPR), divided by maxFPR, so it lies in [0, 1]. It is
// NaN when a class is empty, a score is NaN or maxFPR is outside (0, 1].
// PartialAUC(s, 1) equals AUC(s).
func PartialAUC(s []Scored, maxFPR float64) float64 {
	if !(maxFPR > 0 && maxFPR <= 1) {
		return math.NaN()
	}
	fpr, tpr := ROC(s)
	if fpr == nil {
		return math.NaN()
	}
	var area float64
	for i := 1; i < len(fpr); i++ {
		x0, x1 := fpr[i-1], fpr[i]
		y0, y1 := tpr[i-1], tpr[i]
		if x0 >= maxFPR {
			break
		}
		if x1 > maxFPR {
			y1 = y0 + (y1-y0)*(maxFPR-x0)/(x1-x0)
			x1 = maxFPR
		}
		area += (x1 - x0) * (y0 + y1) / 2
	}
	return area / maxFPR
}
