package evaluate

import (
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// lwSmall is the small matrix of the Ledoit–Wolf checks: 6 vectors of 4
// elements, the last two strongly correlated.
var lwSmall = [][]float64{
	{1.0, 2.0, 0.5, 0.6},
	{-0.5, 1.5, 1.0, 1.2},
	{0.3, -1.0, 2.0, 2.1},
	{2.2, 0.4, -0.7, -0.4},
	{-1.1, 0.9, 0.1, 0.0},
	{0.6, -0.2, 1.4, 1.5},
}

func formatRows(x [][]float64) string {
	var b strings.Builder
	for _, r := range x {
		for j, v := range r {
			if j > 0 {
				b.WriteByte(',')
			}
			b.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
		}
		b.WriteByte('\n')
	}
	return b.String()
}

// TestLedoitWolfNumpy checks LedoitWolf against the paper's formulas
// (Ledoit & Wolf 2004, J. Multivariate Analysis 88(2), Lemmas 3.2–3.4,
// Theorem 3.2, with the norm ‖A‖² = tr(AAᵀ)/p), written out in numpy in
// their defining form: b̄² sums ‖x_k x_kᵀ − S‖² over the vectors.
func TestLedoitWolfNumpy(t *testing.T) {
	needNumpy(t)
	const script = `
import sys, numpy as np
X = np.array([[float(v) for v in l.split(',')] for l in sys.stdin if l.strip()])
n, p = X.shape
X = X - X.mean(axis=0)
S = X.T @ X / n
nrm = lambda A: np.trace(A @ A.T) / p
m = np.trace(S) / p
d2 = nrm(S - m * np.eye(p))
bbar2 = sum(nrm(np.outer(x, x) - S) for x in X) / n**2
b2 = min(bbar2, d2)
a2 = d2 - b2
Sstar = b2 / d2 * m * np.eye(p) + a2 / d2 * S
print(repr(b2 / d2))
print(' '.join(repr(v) for v in Sstar.ravel()))
`
	rng := rand.New(rand.NewPCG(21, 22))
	wide := make([][]float64, 5) // fewer vectors than dimensions
	for i := range wide {
		wide[i] = make([]float64, 8)
		for j := range wide[i] {
			wide[i][j] = rng.NormFloat64() * float64(j+1)
		}
	}
	for _, c := range []struct {
		name string
		x    [][]float64
	}{{"6×4", lwSmall}, {"5×8", wide}} {
		out := strings.Split(strings.TrimSpace(runPythonIn(t, script, formatRows(c.x))), "\n")
		wantDelta, _ := strconv.ParseFloat(out[0], 64)
		cov, mean, delta := LedoitWolf(c.x)
		if !near(delta, wantDelta, 1e-12) {
			t.Errorf("%s: shrinkage %v, numpy %v", c.name, delta, wantDelta)
		}
		if !(delta > 0 && delta < 1) {
			t.Errorf("%s: shrinkage %v not strictly inside (0, 1): the check would not exercise the blend", c.name, delta)
		}
		p := len(c.x[0])
		want := strings.Fields(out[1])
		for i := range p {
			for j := range p {
				w, _ := strconv.ParseFloat(want[i*p+j], 64)
				if !near(cov.At(i, j), w, 1e-12) {
					t.Errorf("%s: cov[%d][%d] = %v, numpy %v", c.name, i, j, cov.At(i, j), w)
				}
			}
		}
		for j := range p {
			var s float64
			for _, r := range c.x {
				s += r[j]
			}
			if !near(mean[j], s/float64(len(c.x)), 1e-14) {
				t.Errorf("%s: mean[%d] = %v", c.name, j, mean[j])
			}
		}
	}
}

func TestLedoitWolfEdges(t *testing.T) {
	for _, c := range []struct {
		name string
		x    [][]float64
	}{
		{"empty", nil},
		{"empty vector", [][]float64{{}}},
		{"ragged", [][]float64{{1, 2}, {3}}},
		{"NaN", [][]float64{{1, math.NaN()}}},
		{"Inf", [][]float64{{1, 2}, {math.Inf(1), 0}}},
	} {
		cov, mean, d := LedoitWolf(c.x)
		if cov != nil || mean != nil || !math.IsNaN(d) {
			t.Errorf("%s: got %v, %v, %v; want nil, nil, NaN", c.name, cov, mean, d)
		}
	}
	// Equal variances and no correlation: S is already m·I (d² = 0).
	cov, _, d := LedoitWolf([][]float64{{1, 1}, {-1, -1}, {1, -1}, {-1, 1}})
	if d != 1 || cov.At(0, 0) != 1 || cov.At(1, 1) != 1 || cov.At(0, 1) != 0 {
		t.Errorf("S = I: cov %v, shrinkage %v; want I and 1", mat.Formatted(cov), d)
	}
}

func diag(v ...float64) *mat.SymDense {
	s := mat.NewSymDense(len(v), nil)
	for i, x := range v {
		s.SetSym(i, i, x)
	}
	return s
}

// TestFrechetDiagonal checks Frechet against the closed form for diagonal
// covariances, Σ (μ1 − μ2)² + Σ (s1 + s2 − 2√(s1·s2)) (the Gaussian
// 2-Wasserstein distance, Dowson & Landau 1982, with commuting
// covariances).
func TestFrechetDiagonal(t *testing.T) {
	for _, c := range []struct {
		name     string
		mu1, mu2 []float64
		s1, s2   []float64
	}{
		{"equal", []float64{1, 2}, []float64{1, 2}, []float64{3, 4}, []float64{3, 4}},
		{"means only", []float64{0, 0, 0}, []float64{1, -2, 3}, []float64{1, 1, 1}, []float64{1, 1, 1}},
		{"variances only", []float64{0, 0}, []float64{0, 0}, []float64{1, 4}, []float64{9, 0.25}},
		{"both", []float64{0.5, -1, 2, 0}, []float64{-0.5, 1, 2.5, 3}, []float64{0.1, 2, 5, 1}, []float64{0.4, 2, 0.2, 7}},
		{"a zero variance", []float64{0}, []float64{0}, []float64{0}, []float64{4}},
	} {
		var want float64
		for i := range c.mu1 {
			d := c.mu1[i] - c.mu2[i]
			want += d*d + c.s1[i] + c.s2[i] - 2*math.Sqrt(c.s1[i]*c.s2[i])
		}
		got, err := Frechet(c.mu1, diag(c.s1...), c.mu2, diag(c.s2...))
		if err != nil || !near(got, want, 1e-12*(1+want)) {
			t.Errorf("%s: Frechet = %v, %v; closed form %v", c.name, got, err, want)
		}
	}
}

// TestFrechetScipy compares Frechet on full covariances with
// scipy.linalg.sqrtm of C1·C2 (the form the Fréchet inception distance's
// reference code uses), an independent square root.
func TestFrechetScipy(t *testing.T) {
	needNumpy(t)
	const script = `
import sys, numpy as np
try:
    from scipy import linalg
except ImportError:
    print('noscipy'); sys.exit()
rows = [[float(v) for v in l.split(',')] for l in sys.stdin if l.strip()]
p = len(rows[0])
m1, m2 = np.array(rows[0]), np.array(rows[1])
C1, C2 = np.array(rows[2:2+p]), np.array(rows[2+p:2+2*p])
cs = linalg.sqrtm(C1 @ C2).real
print(repr(float(((m1 - m2)**2).sum() + np.trace(C1) + np.trace(C2) - 2 * np.trace(cs))))
`
	rng := rand.New(rand.NewPCG(31, 32))
	const p = 5
	rnd := func() ([]float64, *mat.SymDense) {
		a := mat.NewDense(p, p, nil)
		for i := range p {
			for j := range p {
				a.Set(i, j, rng.NormFloat64())
			}
		}
		c := mat.NewSymDense(p, nil)
		c.SymOuterK(1, a) // A·Aᵀ, positive definite
		mu := make([]float64, p)
		for i := range mu {
			mu[i] = rng.NormFloat64()
		}
		return mu, c
	}
	mu1, c1 := rnd()
	mu2, c2 := rnd()
	rows := [][]float64{mu1, mu2}
	for _, c := range []*mat.SymDense{c1, c2} {
		for i := range p {
			r := make([]float64, p)
			for j := range p {
				r[j] = c.At(i, j)
			}
			rows = append(rows, r)
		}
	}
	out := strings.TrimSpace(runPythonIn(t, script, formatRows(rows)))
	if out == "noscipy" {
		t.Skip("scipy unavailable")
	}
	want, _ := strconv.ParseFloat(out, 64)
	got, err := Frechet(mu1, c1, mu2, c2)
	if err != nil || !near(got, want, 1e-9*want) {
		t.Errorf("Frechet = %v, %v; scipy %v", got, err, want)
	}
	back, _ := Frechet(mu2, c2, mu1, c1)
	if !near(back, got, 1e-9*got) {
		t.Errorf("not symmetric: %v and %v", got, back)
	}
	self, _ := Frechet(mu1, c1, mu1, c1)
	if !near(self, 0, 1e-9*got) {
		t.Errorf("distance to itself %v", self)
	}
}

func TestFrechetErrors(t *testing.T) {
	for _, c := range []struct {
		name     string
		mu1, mu2 []float64
		c1, c2   *mat.SymDense
	}{
		{"nil covariance", []float64{0}, []float64{0}, nil, diag(1)},
		{"mean lengths", []float64{0}, []float64{0, 1}, diag(1), diag(1)},
		{"covariance size", []float64{0, 1}, []float64{0, 1}, diag(1, 1), diag(1)},
		{"empty", nil, nil, diag(1), diag(1)},
		{"NaN mean", []float64{math.NaN()}, []float64{0}, diag(1), diag(1)},
		{"Inf variance", []float64{0}, []float64{0}, diag(math.Inf(1)), diag(1)},
	} {
		if _, err := Frechet(c.mu1, c.c1, c.mu2, c.c2); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") {
			t.Errorf("%s: error %v, want one prefixed evaluate:", c.name, err)
		}
	}
}

func TestFrechetSets(t *testing.T) {
	if d, err := FrechetSets(lwSmall, lwSmall); err != nil || !near(d, 0, 1e-9) {
		t.Errorf("same set: %v, %v; want 0", d, err)
	}
	// Shifting every vector by v moves only the mean: the distance is ‖v‖².
	shift := []float64{1, -2, 0.5, 0}
	moved := make([][]float64, len(lwSmall))
	for i, r := range lwSmall {
		moved[i] = make([]float64, len(r))
		for j := range r {
			moved[i][j] = r[j] + shift[j]
		}
	}
	if d, err := FrechetSets(lwSmall, moved); err != nil || !near(d, 1+4+0.25, 1e-9) {
		t.Errorf("shifted set: %v, %v; want 5.25", d, err)
	}
	for _, c := range []struct {
		name string
		a, b [][]float64
	}{
		{"empty a", nil, lwSmall},
		{"ragged b", lwSmall, [][]float64{{1, 2, 3, 4}, {1}}},
		{"widths", lwSmall, [][]float64{{1, 2}}},
		{"NaN", [][]float64{{math.NaN(), 1, 1, 1}}, lwSmall},
	} {
		if _, err := FrechetSets(c.a, c.b); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") {
			t.Errorf("%s: error %v, want one prefixed evaluate:", c.name, err)
		}
	}
}

func TestOutlierScores(t *testing.T) {
	// One dimension, so the standardisation scales numerator and median
	// alike and the ratios can be done by hand: recorded 0, 1, 3 have
	// nearest-other distances 1, 1, 2 (median 1); 1.5 is 0.5 from 1, 10 is
	// 7 from 3, −2 is 2 from 0.
	rec := [][]float64{{0}, {1}, {3}}
	got := OutlierScores(rec, [][]float64{{1.5}, {10}, {-2}, {1, 2}, {math.NaN()}})
	want := []float64{0.5, 7, 2, math.NaN(), math.NaN()}
	for i := range want {
		if !near(got[i], want[i], 1e-12) {
			t.Errorf("score %d = %v, want %v", i, got[i], want[i])
		}
	}
	for _, c := range []struct {
		name string
		rec  [][]float64
	}{
		{"one recorded", [][]float64{{1}}},
		{"none", nil},
		{"ragged", [][]float64{{1}, {1, 2}}},
	} {
		s := OutlierScores(c.rec, [][]float64{{1}, {2}})
		if len(s) != 2 || !math.IsNaN(s[0]) || !math.IsNaN(s[1]) {
			t.Errorf("%s: %v, want two NaN", c.name, s)
		}
	}
}
