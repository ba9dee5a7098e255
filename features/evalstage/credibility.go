package evalstage

import (
	"math"
	"slices"
	"sort"

	"thrum/features/evaluate"
	"thrum/machine"
)

// credibility measures a machine's variants against its recordings (see
// the package doc). Distances that need more clips than there are have no
// value.
func credibility(cs []*clip, conds []string, holdOut func(string) bool) (Credibility, error) {
	cr := Credibility{OutlierThreshold: OutlierThreshold, Conditions: []ConditionCredibility{}, Between: []ConditionPair{}, Worst: []VariantScore{}}
	emb := func(c *clip) []float64 {
		if c.emb == nil {
			c.emb = evaluate.Embedding(c.data)
		}
		return c.emb
	}
	normals := map[string][][]float64{} // recorded normal clips of any split
	var worst []VariantScore
	for _, cond := range conds {
		var rec, vars, evn [][]float64
		var varClips []*clip
		for _, c := range cs {
			if c.condition != cond || c.maskOf != "" || c.data == nil {
				continue
			}
			switch {
			case c.training() && c.origin == machine.OriginRecorded:
				rec = append(rec, emb(c))
				normals[cond] = append(normals[cond], emb(c))
			case c.training() && c.origin == machine.OriginAugmented:
				vars = append(vars, emb(c))
				varClips = append(varClips, c)
			case c.scored() && c.label == machine.LabelNormal:
				evn = append(evn, emb(c))
				normals[cond] = append(normals[cond], emb(c))
			}
		}
		cc := ConditionCredibility{Condition: cond, HoldOut: holdOut(cond), Recorded: len(rec), Variants: len(vars), EvalNorm: len(evn),
			FrechetVariants: frechet(rec, vars), FrechetEval: frechet(rec, evn), OutlierMedian: NaN, OutlierMax: NaN}
		if len(rec) >= 2 && len(vars) > 0 {
			sc := evaluate.OutlierScores(rec, vars)
			sorted := slices.Clone(sc)
			sort.Float64s(sorted)
			cc.OutlierMedian = Num(median(sorted))
			cc.OutlierMax = Num(sorted[len(sorted)-1])
			for i, v := range sc {
				if v > OutlierThreshold {
					cc.Outliers++
				}
				worst = append(worst, VariantScore{Path: varClips[i].audio, Condition: cond, Score: Num(v), Steps: nonNil(varClips[i].steps)})
			}
		}
		cr.Conditions = append(cr.Conditions, cc)
	}
	for i, a := range conds {
		for _, b := range conds[i+1:] {
			cr.Between = append(cr.Between, ConditionPair{A: a, B: b, Frechet: frechet(normals[a], normals[b])})
		}
	}
	sort.SliceStable(worst, func(i, j int) bool {
		si, sj := float64(worst[i].Score), float64(worst[j].Score)
		if si != sj {
			return si > sj || math.IsNaN(sj)
		}
		return worst[i].Path < worst[j].Path
	})
	if len(worst) > WorstListed {
		worst = worst[:WorstListed]
	}
	cr.Worst = append(cr.Worst, worst...)
	return cr, nil
}

func nonNil(s []string) []string {
	if s == nil {
		return []string{}
	}
	return s
}

// frechet is the squared Fréchet distance between Gaussian fits of two
// sets, or no value when either has fewer than two vectors or the fit
// fails.
func frechet(a, b [][]float64) Num {
	if len(a) < 2 || len(b) < 2 {
		return NaN
	}
	d, err := evaluate.FrechetSets(a, b)
	if err != nil {
		return NaN
	}
	return Num(d)
}

func median(sorted []float64) float64 {
	n := len(sorted)
	if n%2 == 1 {
		return sorted[n/2]
	}
	return (sorted[n/2-1] + sorted[n/2]) / 2
}
