package evaluate

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// checkRows reports the width of the rows of x, or an error naming what
// is wrong: no rows, an empty row, rows of different lengths or a value
// that is not finite. what names the input in the error.
func checkRows(x [][]float64, what string) (int, error) {
	if len(x) == 0 {
		return 0, fmt.Errorf("evaluate: %s: no vectors", what)
	}
	p := len(x[0])
	if p == 0 {
		return 0, fmt.Errorf("evaluate: %s: vector 0 is empty", what)
	}
	for i, r := range x {
		if len(r) != p {
			return 0, fmt.Errorf("evaluate: %s: vector %d has length %d, vector 0 has %d", what, i, len(r), p)
		}
		for j, v := range r {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return 0, fmt.Errorf("evaluate: %s: vector %d element %d is %v", what, i, j, v)
			}
		}
	}
	return p, nil
}

// LedoitWolf is the shrinkage covariance of the rows of x (Ledoit & Wolf
// 2004), its mean and the shrinkage weight δ in [0, 1]: the covariance is
// (1 − δ)·S + δ·m·I, S the sample covariance (divided by n), m its mean
// eigenvalue; the package doc has the formulas. It returns nil, nil and
// NaN when x is empty, ragged or holds a value that is not finite.
func LedoitWolf(x [][]float64) (cov *mat.SymDense, mean []float64, shrinkage float64) {
	p, err := checkRows(x, "ledoit-wolf")
	if err != nil {
		return nil, nil, math.NaN()
	}
	var lw lwAccumulator
	lw.init(p)
	for _, r := range x {
		lw.addMean(r)
	}
	lw.finishMean()
	rows := blas64.General{Rows: 0, Cols: p, Stride: p}
	const block = 256
	buf := make([]float64, 0, block*p)
	for i := 0; i < len(x); i += block {
		buf = buf[:0]
		for _, r := range x[i:min(i+block, len(x))] {
			buf = append(buf, r...)
		}
		rows.Rows, rows.Data = len(buf)/p, buf
		lw.addCentered(rows)
	}
	cov, shrinkage = lw.finish()
	return cov, lw.mean, shrinkage
}

// lwAccumulator gathers what the Ledoit–Wolf estimator needs in two passes
// over the vectors: their mean first, then the scatter of the centred
// vectors and the sum of their fourth powers ‖x‖⁴.
type lwAccumulator struct {
	p       int
	n       int
	mean    []float64
	sum     []float64
	scatter blas64.Symmetric // upper triangle of Σ x·xᵀ, centred
	norm4   float64          // Σ ‖x‖⁴, centred
}

func (a *lwAccumulator) init(p int) {
	a.p = p
	a.sum = make([]float64, p)
	a.scatter = blas64.Symmetric{N: p, Stride: p, Data: make([]float64, p*p), Uplo: blas.Upper}
}

func (a *lwAccumulator) addMean(r []float64) {
	for j, v := range r {
		a.sum[j] += v
	}
	a.n++
}

func (a *lwAccumulator) finishMean() {
	a.mean = make([]float64, a.p)
	for j, v := range a.sum {
		a.mean[j] = v / float64(a.n)
	}
}

// addCentered centres the rows of g in place and adds them.
func (a *lwAccumulator) addCentered(g blas64.General) {
	for i := range g.Rows {
		r := g.Data[i*g.Stride : i*g.Stride+a.p]
		var q float64
		for j := range r {
			r[j] -= a.mean[j]
			q += r[j] * r[j]
		}
		a.norm4 += q * q
	}
	blas64.Syrk(blas.Trans, 1, g, 1, a.scatter)
}

// finish returns the shrunk covariance and δ (Ledoit & Wolf 2004, Lemmas
// 3.2–3.4 and Theorem 3.2; the package doc spells it out).
func (a *lwAccumulator) finish() (*mat.SymDense, float64) {
	p, n := a.p, float64(a.n)
	s := mat.NewSymDense(p, nil)
	var trace, frob float64 // tr S, ‖S‖²_F
	for i := range p {
		for j := i; j < p; j++ {
			v := a.scatter.Data[i*p+j] / n
			s.SetSym(i, j, v)
			if i == j {
				trace += v
				frob += v * v
			} else {
				frob += 2 * v * v
			}
		}
	}
	m := trace / float64(p)
	d2 := frob - float64(p)*m*m  // ‖S − m·I‖²_F
	b2 := (a.norm4/n - frob) / n // (1/n²) Σ ‖x·xᵀ − S‖²_F
	b2 = max(0, min(b2, d2))     // b² = min(b̄², d²)
	delta := 1.0                 // S = m·I already: any δ gives S
	if d2 > 0 {
		delta = b2 / d2
	}
	for i := range p {
		for j := i; j < p; j++ {
			v := (1 - delta) * s.At(i, j)
			if i == j {
				v += delta * m
			}
			s.SetSym(i, j, v)
		}
	}
	return s, delta
}
