package evaluate

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Frechet is the squared Fréchet (2-Wasserstein) distance between the
// Gaussians N(mu1, c1) and N(mu2, c2):
// ‖μ1 − μ2‖² + tr C1 + tr C2 − 2·tr √(√C1·C2·√C1). The square roots come
// from symmetric eigendecompositions, eigenvalues below zero (rounding)
// taken as zero; a result below zero from rounding is returned as 0. It
// fails on nil or mismatched dimensions and values that are not finite.
func Frechet(mu1 []float64, c1 *mat.SymDense, mu2 []float64, c2 *mat.SymDense) (float64, error) {
	if c1 == nil || c2 == nil {
		return math.NaN(), errors.New("evaluate: frechet: nil covariance")
	}
	p := len(mu1)
	if p == 0 || len(mu2) != p || c1.SymmetricDim() != p || c2.SymmetricDim() != p {
		return math.NaN(), fmt.Errorf("evaluate: frechet: dimensions differ (mean %d and %d, covariance %d and %d)",
			len(mu1), len(mu2), c1.SymmetricDim(), c2.SymmetricDim())
	}
	var d2, tr float64
	for i := range p {
		d := mu1[i] - mu2[i]
		d2 += d * d
		tr += c1.At(i, i) + c2.At(i, i)
	}
	if math.IsNaN(d2+tr) || math.IsInf(d2+tr, 0) {
		return math.NaN(), errors.New("evaluate: frechet: a mean or variance is not finite")
	}
	s1, err := sqrtSym(c1)
	if err != nil {
		return math.NaN(), err
	}
	var t, m mat.Dense
	t.Mul(s1, c2)
	m.Mul(&t, s1)
	// √C1·C2·√C1 is symmetric in exact arithmetic; average away the
	// rounding before the symmetric eigendecomposition.
	ms := mat.NewSymDense(p, nil)
	for i := range p {
		for j := i; j < p; j++ {
			ms.SetSym(i, j, (m.At(i, j)+m.At(j, i))/2)
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(ms, false) {
		return math.NaN(), errors.New("evaluate: frechet: eigendecomposition did not converge")
	}
	var cross float64
	for _, v := range eig.Values(nil) {
		cross += math.Sqrt(max(v, 0))
	}
	return max(0, d2+tr-2*cross), nil
}

// sqrtSym is the symmetric square root of a positive semi-definite c.
func sqrtSym(c *mat.SymDense) (*mat.SymDense, error) {
	var eig mat.EigenSym
	if !eig.Factorize(c, true) {
		return nil, errors.New("evaluate: frechet: eigendecomposition did not converge")
	}
	vals := eig.Values(nil)
	var w mat.Dense
	eig.VectorsTo(&w)
	// √C = V·diag(√λ)·Vᵀ = W·Wᵀ with W = V·diag(λ^¼): one symmetric
	// rank-k product instead of a triple loop over elements.
	for k, l := range vals {
		r := math.Sqrt(math.Sqrt(max(l, 0)))
		for i := range len(vals) {
			w.Set(i, k, w.At(i, k)*r)
		}
	}
	var s mat.SymDense
	s.SymOuterK(1, &w)
	return &s, nil
}

// FrechetSets fits a Gaussian (mean and Ledoit–Wolf covariance) to each
// set of vectors and returns Frechet between them. It fails on an empty or
// ragged set, values that are not finite or sets of different widths.
func FrechetSets(a, b [][]float64) (float64, error) {
	pa, err := checkRows(a, "frechet set a")
	if err != nil {
		return math.NaN(), err
	}
	pb, err := checkRows(b, "frechet set b")
	if err != nil {
		return math.NaN(), err
	}
	if pa != pb {
		return math.NaN(), fmt.Errorf("evaluate: frechet: set a has vectors of length %d, set b %d", pa, pb)
	}
	ca, ma, _ := LedoitWolf(a)
	cb, mb, _ := LedoitWolf(b)
	return Frechet(ma, ca, mb, cb)
}
