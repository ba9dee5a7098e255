package evaluate

import (
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// example is the worked example of the metric tests: normal scores 0.1,
// 0.4, 0.35, 0.8 and anomalous 0.35, 0.9, 0.8 (one tie in each class
// pair). Counted by hand over the 12 (anomalous, normal) pairs: 0.35 beats
// 0.1 and ties 0.35 (1.5), 0.9 beats all four (4), 0.8 beats three and ties
// 0.8 (3.5): U = 9, AUC = 9/12 = 0.75.
func example() []Scored {
	return []Scored{
		{0.1, false, "n"}, {0.4, false, "n"}, {0.35, false, "n"}, {0.8, false, "n"},
		{0.35, true, "a"}, {0.9, true, "a"}, {0.8, true, "a"},
	}
}

func mk(normal, anomalous []float64) []Scored {
	var s []Scored
	for _, v := range normal {
		s = append(s, Scored{Score: v})
	}
	for _, v := range anomalous {
		s = append(s, Scored{Score: v, Anomalous: true})
	}
	return s
}

func near(a, b, tol float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Abs(a-b) <= tol
}

func TestAUC(t *testing.T) {
	nan := math.NaN()
	for _, c := range []struct {
		name string
		s    []Scored
		want float64 // by hand
	}{
		{"worked example", example(), 0.75},
		{"perfect", mk([]float64{1, 2}, []float64{3, 4, 5}), 1},
		{"reversed", mk([]float64{3, 4, 5}, []float64{1, 2}), 0},
		{"all tied", mk([]float64{1, 1}, []float64{1, 1, 1}), 0.5},
		{"one of four pairs wrong", mk([]float64{1, 3}, []float64{2, 4}), 0.75},
		{"no anomalous", mk([]float64{1, 2}, nil), nan},
		{"no normal", mk(nil, []float64{1}), nan},
		{"empty", nil, nan},
		{"NaN score", mk([]float64{1, nan}, []float64{2}), nan},
	} {
		if got := AUC(c.s); !near(got, c.want, 1e-15) {
			t.Errorf("%s: AUC = %v, want %v", c.name, got, c.want)
		}
	}
}

func TestROC(t *testing.T) {
	// By hand for the worked example, threshold stepping down through
	// 0.9 (a), 0.8 (a, n), 0.4 (n), 0.35 (a, n), 0.1 (n).
	fpr, tpr := ROC(example())
	wantF := []float64{0, 0, 0.25, 0.5, 0.75, 1}
	wantT := []float64{0, 1.0 / 3, 2.0 / 3, 2.0 / 3, 1, 1}
	if len(fpr) != len(wantF) || len(tpr) != len(wantT) {
		t.Fatalf("ROC = %v, %v; want %v, %v", fpr, tpr, wantF, wantT)
	}
	for i := range wantF {
		if !near(fpr[i], wantF[i], 1e-15) || !near(tpr[i], wantT[i], 1e-15) {
			t.Errorf("point %d = (%v, %v), want (%v, %v)", i, fpr[i], tpr[i], wantF[i], wantT[i])
		}
	}
	if f, tp := ROC(mk([]float64{1}, nil)); f != nil || tp != nil {
		t.Errorf("ROC with no anomalous clip = %v, %v, want nil", f, tp)
	}
}

func TestPartialAUC(t *testing.T) {
	nan := math.NaN()
	for _, c := range []struct {
		name   string
		s      []Scored
		maxFPR float64
		want   float64 // by hand, trapezoids on the ROC of TestROC
	}{
		// (0,1/3)–(0.25,2/3): 0.125; then 0.05 wide at tpr 2/3: 1/30;
		// (0.125 + 1/30)/0.3 = 19/36.
		{"example at 0.3", example(), 0.3, 19.0 / 36},
		// 0.125 + 0.25·2/3 = 7/24, over 0.5.
		{"example at 0.5", example(), 0.5, 7.0 / 12},
		// inside the first segment: (0,1/3)–(0.1, 1/3 + 0.4·1/3)
		// = 0.1·(1/3 + 7/15)/2 = 0.04, over 0.1.
		{"example at 0.1", example(), 0.1, 0.4},
		{"example at 1 is the AUC", example(), 1, 0.75},
		{"perfect", mk([]float64{1, 2}, []float64{3}), 0.1, 1},
		{"reversed", mk([]float64{3}, []float64{1, 2}), 0.1, 0},
		// all tied: the ROC is the diagonal, area 0.1²/2 over 0.1.
		{"all tied", mk([]float64{1, 1}, []float64{1}), 0.1, 0.05},
		{"maxFPR 0", example(), 0, nan},
		{"maxFPR above 1", example(), 1.5, nan},
		{"maxFPR NaN", example(), nan, nan},
		{"no normal", mk(nil, []float64{1}), 0.1, nan},
	} {
		if got := PartialAUC(c.s, c.maxFPR); !near(got, c.want, 1e-14) {
			t.Errorf("%s: PartialAUC = %v, want %v", c.name, got, c.want)
		}
	}
}

// TestPartialAUCFullIsAUC checks PartialAUC(s, 1) = AUC(s) on random
// scores with many ties.
func TestPartialAUCFullIsAUC(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for n := 2; n < 60; n += 7 {
		var s []Scored
		for i := range n {
			s = append(s, Scored{Score: float64(rng.IntN(5)), Anomalous: i%3 == 0})
		}
		if a, p := AUC(s), PartialAUC(s, 1); !near(a, p, 1e-12) {
			t.Errorf("n=%d: AUC %v, PartialAUC(1) %v", n, a, p)
		}
	}
}

// TestAUCNumpy compares AUC with the Mann–Whitney rank-sum formula
// U = R_pos − n_pos(n_pos+1)/2, AUC = U/(n_pos·n_neg), with mid-ranks for
// ties (Mann & Whitney 1947), computed independently in numpy.
func TestAUCNumpy(t *testing.T) {
	needNumpy(t)
	const script = `
import sys, numpy as np
for line in sys.stdin:
    f = line.split()
    if not f: continue
    lab = np.array([int(x) for x in f[0].split(',')])
    sc = np.array([float(x) for x in f[1].split(',')])
    # mid-ranks: the mean of the 1-based positions each distinct value occupies
    u, inv, cnt = np.unique(sc, return_inverse=True, return_counts=True)
    ends = np.cumsum(cnt)
    mid = ends - (cnt - 1) / 2.0
    ranks = mid[inv]
    npos = lab.sum(); nneg = len(lab) - npos
    U = ranks[lab == 1].sum() - npos * (npos + 1) / 2.0
    print(repr(U / (npos * nneg)))
`
	rng := rand.New(rand.NewPCG(7, 11))
	var in strings.Builder
	var cases [][]Scored
	for c := range 12 {
		n := 5 + rng.IntN(80)
		var s []Scored
		for i := range n {
			an := i < 2 || rng.IntN(3) == 0
			v := rng.NormFloat64()
			if c%2 == 0 {
				v = float64(rng.IntN(6)) // many ties
			}
			if an {
				v += 0.7
			}
			s = append(s, Scored{Score: v, Anomalous: an && i != 1})
		}
		cases = append(cases, s)
		var labs, scs []string
		for _, x := range s {
			l := "0"
			if x.Anomalous {
				l = "1"
			}
			labs = append(labs, l)
			scs = append(scs, strconv.FormatFloat(x.Score, 'g', -1, 64))
		}
		in.WriteString(strings.Join(labs, ",") + " " + strings.Join(scs, ",") + "\n")
	}
	out := strings.Fields(runPythonIn(t, script, in.String()))
	if len(out) != len(cases) {
		t.Fatalf("numpy gave %d values for %d cases", len(out), len(cases))
	}
	for i, s := range cases {
		want, err := strconv.ParseFloat(out[i], 64)
		if err != nil {
			t.Fatal(err)
		}
		if got := AUC(s); !near(got, want, 1e-12) {
			t.Errorf("case %d: AUC = %v, numpy rank-sum %v", i, got, want)
		}
	}
}

func TestBootstrapCI(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	// Five normal and four anomalous recordings of six clips each; the
	// scores of one recording share an offset, so clips are not independent.
	var s []Scored
	for g := range 9 {
		an := g >= 5
		off := rng.NormFloat64()
		for range 6 {
			v := off + 0.3*rng.NormFloat64()
			if an {
				v += 1
			}
			s = append(s, Scored{Score: v, Anomalous: an, Group: "rec" + strconv.Itoa(g)})
		}
	}
	ci := BootstrapCI(s, AUC, 400, 0.95, 42)
	auc := AUC(s)
	if !(ci.Lo <= auc && auc <= ci.Hi && ci.Lo < ci.Hi && ci.Lo >= 0 && ci.Hi <= 1) {
		t.Errorf("interval %v does not bracket AUC %v inside [0, 1]", ci, auc)
	}
	if again := BootstrapCI(s, AUC, 400, 0.95, 42); again != ci {
		t.Errorf("same seed gave %v then %v", ci, again)
	}
	if other := BootstrapCI(s, AUC, 400, 0.95, 43); other == ci {
		t.Errorf("seeds 42 and 43 gave the same interval %v", ci)
	}
	// The interval depends on the groups, not on the order of the clips.
	sh := slices.Clone(s)
	rand.New(rand.NewPCG(5, 6)).Shuffle(len(sh), func(i, j int) { sh[i], sh[j] = sh[j], sh[i] })
	if got := BootstrapCI(sh, AUC, 400, 0.95, 42); got != ci {
		t.Errorf("shuffled clips gave %v, want %v", got, ci)
	}
	// Treating every clip as independent ignores the shared offsets and
	// gives a narrower interval than resampling whole recordings.
	perClip := slices.Clone(s)
	for i := range perClip {
		perClip[i].Group = strconv.Itoa(i)
	}
	if pc := BootstrapCI(perClip, AUC, 400, 0.95, 42); !(pc.Hi-pc.Lo < ci.Hi-ci.Lo) {
		t.Errorf("per-clip interval %v not narrower than per-recording %v", pc, ci)
	}
}

// TestBootstrapWholeGroups checks that every resample holds whole groups
// and both classes in their original numbers of groups.
func TestBootstrapWholeGroups(t *testing.T) {
	s := []Scored{
		{1, false, "a"}, {2, false, "a"}, {3, false, "a"},
		{4, false, "b"},
		{5, true, "c"}, {6, true, "c"},
		{7, true, "d"}, {8, true, "d"}, {9, true, "d"},
		{10, true, "e"},
	}
	size := map[string]int{"a": 3, "b": 1, "c": 2, "d": 3, "e": 1}
	bad := ""
	BootstrapCI(s, func(r []Scored) float64 {
		n := map[string]int{}
		var groups [2]int
		for _, c := range r {
			n[c.Group]++
		}
		for g, k := range n {
			if k%size[g] != 0 {
				bad = "group " + g + " split"
			}
			if g < "c" {
				groups[0] += k / size[g]
			} else {
				groups[1] += k / size[g]
			}
		}
		if groups != [2]int{2, 3} {
			bad = "class group counts " + strconv.Itoa(groups[0]) + ", " + strconv.Itoa(groups[1])
		}
		return 0
	}, 200, 0.9, 1)
	if bad != "" {
		t.Error(bad)
	}
}

func TestBootstrapDegenerate(t *testing.T) {
	s := example()
	nanMetric := func([]Scored) float64 { return math.NaN() }
	for _, c := range []struct {
		name string
		ci   Interval
	}{
		{"metric always NaN", BootstrapCI(s, nanMetric, 50, 0.95, 1)},
		{"no rounds", BootstrapCI(s, AUC, 0, 0.95, 1)},
		{"level 1", BootstrapCI(s, AUC, 50, 1, 1)},
		{"level 0", BootstrapCI(s, AUC, 50, 0, 1)},
		{"no anomalous", BootstrapCI(mk([]float64{1, 2}, nil), AUC, 50, 0.95, 1)},
		{"empty", BootstrapCI(nil, AUC, 50, 0.95, 1)},
		{"diff of different lengths", BootstrapDiffCI(s, s[:3], AUC, 50, 0.95, 1)},
	} {
		if !math.IsNaN(c.ci.Lo) || !math.IsNaN(c.ci.Hi) {
			t.Errorf("%s: interval %v, want NaN", c.name, c.ci)
		}
	}
	// One group per class: every resample is the data itself.
	if ci := BootstrapCI(s, AUC, 50, 0.95, 1); ci != (Interval{0.75, 0.75}) {
		t.Errorf("single groups: interval %v, want the point 0.75", ci)
	}
	// A metric NaN on some resamples only: those are left out.
	k := 0
	ci := BootstrapCI(s, func([]Scored) float64 {
		k++
		if k%2 == 0 {
			return math.NaN()
		}
		return 0.5
	}, 50, 0.95, 1)
	if ci != (Interval{0.5, 0.5}) {
		t.Errorf("partly NaN metric: interval %v, want the point 0.5", ci)
	}
}

func TestBootstrapDiffCI(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	var a, b []Scored
	for g := range 8 {
		for range 5 {
			an := g >= 4
			v := rng.NormFloat64()
			if an {
				v += 0.5
			}
			grp := "r" + strconv.Itoa(g)
			a = append(a, Scored{v, an, grp})
			w := v
			if an {
				w += 1 // the second scoring separates better
			}
			b = append(b, Scored{w, an, grp})
		}
	}
	if ci := BootstrapDiffCI(a, a, AUC, 200, 0.95, 3); ci != (Interval{0, 0}) {
		t.Errorf("difference with itself: %v, want [0, 0]", ci)
	}
	ci := BootstrapDiffCI(a, b, AUC, 400, 0.95, 3)
	d := AUC(b) - AUC(a)
	if !(d > 0 && ci.Lo <= d && d <= ci.Hi && ci.Lo >= 0) {
		t.Errorf("difference %v, interval %v: want a non-negative interval around it (b only raises anomalous scores)", d, ci)
	}
	lab := slices.Clone(b)
	lab[0].Anomalous = true
	if ci := BootstrapDiffCI(a, lab, AUC, 50, 0.95, 3); !math.IsNaN(ci.Lo) {
		t.Errorf("labels differ: %v, want NaN", ci)
	}
}
