package evaluate

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// randClip is a clip of frames×bands values around level, with a slow
// drift across bands so that neighbouring frames and bands correlate.
func randClip(rng *rand.Rand, frames, bands int, level float64) [][]float64 {
	c := make([][]float64, frames)
	prev := make([]float64, bands)
	for f := range c {
		c[f] = make([]float64, bands)
		for b := range c[f] {
			prev[b] = 0.6*prev[b] + rng.NormFloat64()
			c[f][b] = level + prev[b] + 0.1*float64(b)
		}
	}
	return c
}

func TestEmbedding(t *testing.T) {
	// By hand: band means (1+3)/2, (2+6)/2; deviations ±1, ±2.
	e := Embedding([][]float64{{1, 2}, {3, 6}})
	want := []float64{2, 4, 1, 2}
	if len(e) != len(want) {
		t.Fatalf("Embedding = %v, want %v", e, want)
	}
	for i := range want {
		if !near(e[i], want[i], 1e-15) {
			t.Errorf("Embedding[%d] = %v, want %v", i, e[i], want[i])
		}
	}
	for _, bad := range [][][]float64{nil, {{}}, {{1, 2}, {3}}} {
		if e := Embedding(bad); e != nil {
			t.Errorf("Embedding(%v) = %v, want nil", bad, e)
		}
	}
}

func TestKNNByHand(t *testing.T) {
	// Training embeddings (mean, std) = (0, 0) and (2, 0); the std element
	// does not vary, so it is centred but not scaled: standardised
	// (−1, 0) and (1, 0). A clip at 4 → (3, 0): distances 4 and 2. A clip
	// of frames 1, 3 → (2, 1) → (1, 1): distances √5 and 1.
	d := NewKNN(1)
	if err := d.Fit([][][]float64{{{0}, {0}}, {{2}, {2}}}); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		k    int
		clip [][]float64
		want float64
	}{
		{1, [][]float64{{4}, {4}}, 2},
		{2, [][]float64{{4}, {4}}, 3},
		{5, [][]float64{{4}, {4}}, 3},
		{1, [][]float64{{1}, {3}}, 1},
		{2, [][]float64{{1}, {3}}, (1 + math.Sqrt(5)) / 2},
		{1, [][]float64{{0}, {0}}, 0},
	} {
		d.(*KNN).K = c.k
		if got := d.Score(c.clip); !near(got, c.want, 1e-14) {
			t.Errorf("k=%d clip %v: score %v, want %v", c.k, c.clip, got, c.want)
		}
	}
}

func TestGaussianByHand(t *testing.T) {
	// One band, context 1: the covariance is the variance (d² = 0, so
	// shrinkage changes nothing). Vectors 0, 2, 1, 3: mean 1.5, variance
	// (2.25+0.25+0.25+2.25)/4 = 1.25. A clip of frames 1.5 and 4 has
	// distances 0 and 2.5/√1.25, mean √1.25.
	g := NewGaussian(1)
	if err := g.Fit([][][]float64{{{0}, {2}}, {{1}, {3}}}); err != nil {
		t.Fatal(err)
	}
	if got := g.Score([][]float64{{1.5}, {4}}); !near(got, math.Sqrt(1.25), 1e-14) {
		t.Errorf("score %v, want √1.25", got)
	}
}

// TestGaussianStacking compares the detector with the same model built
// directly: context vectors stacked here, LedoitWolf on them, and the
// Mahalanobis distance through an explicit inverse.
func TestGaussianStacking(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 13))
	var train [][][]float64
	for i := range 6 {
		train = append(train, randClip(rng, 9+i, 3, 0))
	}
	train = append(train, randClip(rng, 2, 3, 0)) // shorter than the context: no vectors
	test := randClip(rng, 11, 3, 0.5)
	for _, c := range []struct{ context, hop int }{{1, 1}, {3, 1}, {3, 2}, {3, 3}, {4, 5}} {
		stackAll := func(clip [][]float64) [][]float64 {
			var out [][]float64
			for s := 0; s+c.context <= len(clip); s += c.hop {
				var v []float64
				for k := range c.context {
					v = append(v, clip[s+k]...)
				}
				out = append(out, v)
			}
			return out
		}
		var vecs [][]float64
		for _, cl := range train {
			vecs = append(vecs, stackAll(cl)...)
		}
		cov, mean, delta := LedoitWolf(vecs)
		var inv mat.Dense
		if err := inv.Inverse(cov); err != nil {
			t.Fatal(err)
		}
		var want float64
		tv := stackAll(test)
		for _, v := range tv {
			x := make([]float64, len(v))
			for j := range v {
				x[j] = v[j] - mean[j]
			}
			xv := mat.NewVecDense(len(x), x)
			want += math.Sqrt(mat.Inner(xv, &inv, xv))
		}
		want /= float64(len(tv))

		g := NewGaussianHop(c.context, c.hop)
		if err := g.Fit(train); err != nil {
			t.Fatal(err)
		}
		if got := g.Score(test); !near(got, want, 1e-9*want) {
			t.Errorf("context %d hop %d: score %v, direct %v", c.context, c.hop, got, want)
		}
		gg := g.(*Gaussian)
		if gg.Vectors != len(vecs) || !near(gg.Shrinkage, delta, 1e-12) {
			t.Errorf("context %d hop %d: %d vectors, shrinkage %v; direct %d, %v", c.context, c.hop, gg.Vectors, gg.Shrinkage, len(vecs), delta)
		}
	}
}

// TestDetectorsSeparate checks that both detectors rank clips with a
// raised band above normal ones, and that fitting twice gives the same
// scores bit for bit.
func TestDetectorsSeparate(t *testing.T) {
	rng := rand.New(rand.NewPCG(14, 15))
	var train [][][]float64
	for range 30 {
		train = append(train, randClip(rng, 40, 8, -50))
	}
	var s []Scored
	var clips [][][]float64
	for i := range 20 {
		c := randClip(rng, 40, 8, -50)
		an := i%2 == 1
		if an {
			for _, f := range c {
				f[3] += 3 // a tone in one band
			}
		}
		clips = append(clips, c)
		s = append(s, Scored{Anomalous: an})
	}
	for _, d := range []Detector{NewGaussian(4), NewKNN(3)} {
		if err := d.Fit(train); err != nil {
			t.Fatal(err)
		}
		for i, c := range clips {
			s[i].Score = d.Score(c)
		}
		if a := AUC(s); a != 1 {
			t.Errorf("%s: AUC %v, want 1", d.Name(), a)
		}
		first := s[0].Score
		if err := d.Fit(train); err != nil {
			t.Fatal(err)
		}
		if again := d.Score(clips[0]); math.Float64bits(again) != math.Float64bits(first) {
			t.Errorf("%s: refit scores %v, first %v", d.Name(), again, first)
		}
	}
}

func TestDetectorErrors(t *testing.T) {
	ok := [][]float64{{1, 2}, {2, 1}, {0, 3}, {3, 3}}
	for _, c := range []struct {
		name  string
		d     Detector
		train [][][]float64
		want  string // part of the error
	}{
		{"no clips", NewGaussian(2), nil, "no training clips"},
		{"no clips knn", NewKNN(1), [][][]float64{}, "no training clips"},
		{"clip without frames", NewGaussian(1), [][][]float64{ok, {}}, "clip 1 has no frames"},
		{"frame without bands", NewKNN(1), [][][]float64{{{}}}, "clip 0 frame 0 has no bands"},
		{"ragged frame", NewGaussian(1), [][][]float64{{{1, 2}, {1}}}, "clip 0 frame 1 has 1 bands"},
		{"band counts differ", NewKNN(1), [][][]float64{ok, {{1, 2, 3}}}, "clip 1 has 3 bands"},
		{"NaN", NewGaussian(1), [][][]float64{ok, {{1, math.NaN()}}}, "clip 1 frame 0 band 1 is NaN"},
		{"Inf", NewKNN(1), [][][]float64{{{math.Inf(-1), 0}}}, "band 0 is -Inf"},
		{"context 0", NewGaussian(0), [][][]float64{ok}, "context 0"},
		{"hop 0", NewGaussianHop(2, 0), [][][]float64{ok}, "hop 0"},
		{"k 0", NewKNN(0), [][][]float64{ok}, "k 0"},
		{"clips shorter than context", NewGaussian(5), [][][]float64{ok}, "no training clip has 5 frames"},
		{"no variation", NewGaussian(1), [][][]float64{{{1, 1}, {1, 1}}}, "not positive definite"},
	} {
		err := c.d.Fit(c.train)
		if err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one prefixed evaluate: containing %q", c.name, err, c.want)
		}
		if s := c.d.Score(ok); !math.IsNaN(s) {
			t.Errorf("%s: score after a failed fit %v, want NaN", c.name, s)
		}
	}
}

func TestScoreBadClip(t *testing.T) {
	train := [][][]float64{{{1, 2}, {2, 1}, {0, 3}, {3, 3}}, {{2, 2}, {1, 0}, {3, 1}}}
	for _, d := range []Detector{NewGaussian(2), NewKNN(1)} {
		if s := d.Score(train[0]); !math.IsNaN(s) {
			t.Errorf("%s: score before Fit %v, want NaN", d.Name(), s)
		}
		if err := d.Fit(train); err != nil {
			t.Fatal(err)
		}
		for _, c := range []struct {
			name string
			clip [][]float64
		}{
			{"empty", nil},
			{"no bands", [][]float64{{}}},
			{"other band count", [][]float64{{1, 2, 3}, {1, 2, 3}}},
			{"ragged", [][]float64{{1, 2}, {1}}},
			{"NaN", [][]float64{{1, 2}, {math.NaN(), 1}}},
		} {
			if s := d.Score(c.clip); !math.IsNaN(s) {
				t.Errorf("%s %s: score %v, want NaN", d.Name(), c.name, s)
			}
		}
	}
	g := NewGaussian(2)
	g.Fit(train)
	if s := g.Score([][]float64{{1, 2}}); !math.IsNaN(s) {
		t.Errorf("clip shorter than the context: score %v, want NaN", s)
	}
}
