package evalstage

import (
	"context"
	"math"
	"slices"
	"sort"

	"thrum/features/evaluate"
	"thrum/machine"
	"thrum/machine/pool"
)

// credibility measures a machine's variants against its recordings (see
// the package doc). Distances that need more clips than there are have no
// value.
func credibility(ctx context.Context, cs []*clip, conds []string, holdOut func(string) bool, workers int) (Credibility, error) {
	cr := Credibility{OutlierThreshold: OutlierThreshold, Conditions: []ConditionCredibility{}, Between: []ConditionPair{}, Worst: []VariantScore{}}
	emb := func(c *clip) []float64 {
		if c.emb == nil {
			c.emb = evaluate.Embedding(c.data)
		}
		return c.emb
	}
	normals := map[string][][]float64{} // recorded normal clips of any split
	// the Fréchet distances (eigendecompositions) run on the worker pool
	type task struct {
		a, b [][]float64
		dst  *Num
	}
	var tasks []task
	var worst []VariantScore
	var sets [][3][][]float64 // per condition: recorded, variants, eval normals
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
			FrechetVariants: NaN, FrechetEval: NaN, OutlierMedian: NaN, OutlierMax: NaN}
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
		sets = append(sets, [3][][]float64{rec, vars, evn})
	}
	for i, a := range conds {
		for _, b := range conds[i+1:] {
			cr.Between = append(cr.Between, ConditionPair{A: a, B: b, Frechet: NaN})
		}
	}
	k := 0
	for i, a := range conds {
		for _, b := range conds[i+1:] {
			tasks = append(tasks, task{normals[a], normals[b], &cr.Between[k].Frechet})
			k++
		}
	}
	for i := range cr.Conditions {
		c := &cr.Conditions[i]
		tasks = append(tasks, task{sets[i][0], sets[i][1], &c.FrechetVariants}, task{sets[i][0], sets[i][2], &c.FrechetEval})
	}
	if err := pool.Each(ctx, len(tasks), workers, func(_ context.Context, _, i int) error {
		*tasks[i].dst = frechet(tasks[i].a, tasks[i].b)
		return nil
	}); err != nil {
		return cr, err
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
