package evaluate

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"
)

// Detector is fitted on normal training clips only. A clip is a log-mel
// indexed [frame][band]. Score is safe for concurrent use once Fit has
// returned; Fit is not.
type Detector interface {
	Name() string                   // "gaussian", "knn"
	Fit(train [][][]float64) error  // clips, each [frame][band]
	Score(clip [][]float64) float64 // larger = more anomalous
}

// Gaussian is the detector NewGaussian returns; its fields after Fit are
// there for reports.
type Gaussian struct {
	// Context is the number of consecutive frames stacked into one
	// context vector; Hop is the frame advance between vectors.
	Context, Hop int
	// Bands is the band count seen in training (0 before Fit).
	Bands int
	// Shrinkage is the Ledoit–Wolf weight δ of the fitted covariance.
	Shrinkage float64
	// Vectors is the number of training context vectors.
	Vectors int

	mean []float64
	// chol is the upper Cholesky factor U of the covariance (Σ = UᵀU), so
	// that the Mahalanobis distance of x is ‖U⁻ᵀ(x − μ)‖.
	chol blas64.Triangular
}

// NewGaussian returns the Gaussian detector on context vectors of context
// consecutive frames, with a hop of context frames: the vectors stack
// disjoint runs of frames, so each frame is in one vector. Overlapping
// vectors (hop 1) add little to the fit and cost context times as much in
// Fit and Score; NewGaussianHop chooses the hop.
func NewGaussian(context int) Detector { return NewGaussianHop(context, context) }

// NewGaussianHop is NewGaussian with a hop of hop frames between context
// vectors (hop 1: every start position), for both Fit and Score.
func NewGaussianHop(context, hop int) Detector { return &Gaussian{Context: context, Hop: hop} }

// Name returns "gaussian".
func (g *Gaussian) Name() string { return "gaussian" }

// checkClip reports the band count of a clip or an error naming the clip
// (index i), frame and band at fault.
func checkClip(c [][]float64, i int) (int, error) {
	if len(c) == 0 {
		return 0, fmt.Errorf("evaluate: clip %d has no frames", i)
	}
	b := len(c[0])
	if b == 0 {
		return 0, fmt.Errorf("evaluate: clip %d frame 0 has no bands", i)
	}
	for f, row := range c {
		if len(row) != b {
			return 0, fmt.Errorf("evaluate: clip %d frame %d has %d bands, frame 0 has %d", i, f, len(row), b)
		}
		for k, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return 0, fmt.Errorf("evaluate: clip %d frame %d band %d is %v", i, f, k, v)
			}
		}
	}
	return b, nil
}

// checkTrain checks every training clip and that they share a band count.
func checkTrain(train [][][]float64) (int, error) {
	if len(train) == 0 {
		return 0, errors.New("evaluate: no training clips")
	}
	bands := 0
	for i, c := range train {
		b, err := checkClip(c, i)
		if err != nil {
			return 0, err
		}
		if i == 0 {
			bands = b
		} else if b != bands {
			return 0, fmt.Errorf("evaluate: clip %d has %d bands, clip 0 has %d", i, b, bands)
		}
	}
	return bands, nil
}

// vectors returns the number of context vectors of a clip of f frames.
func (g *Gaussian) vectors(f int) int {
	if f < g.Context {
		return 0
	}
	return 1 + (f-g.Context)/g.Hop
}

// stack writes the context vectors of clip into dst, one row each.
func (g *Gaussian) stack(dst []float64, clip [][]float64) blas64.General {
	n, b := g.vectors(len(clip)), len(clip[0])
	d := g.Context * b
	if cap(dst) < n*d {
		dst = make([]float64, n*d)
	}
	dst = dst[:n*d]
	for v := range n {
		row := dst[v*d : (v+1)*d]
		for c := range g.Context {
			copy(row[c*b:(c+1)*b], clip[v*g.Hop+c])
		}
	}
	return blas64.General{Rows: n, Cols: d, Stride: d, Data: dst}
}

// Fit estimates the mean and the Ledoit–Wolf covariance of the training
// context vectors. It fails on empty or ragged input, values that are not
// finite, a context or hop below 1, no clip as long as the context, or a
// covariance that is not positive definite (training vectors that do not
// vary at all).
func (g *Gaussian) Fit(train [][][]float64) error {
	g.Bands, g.mean, g.chol = 0, nil, blas64.Triangular{}
	if g.Context < 1 || g.Hop < 1 {
		return fmt.Errorf("evaluate: gaussian context %d and hop %d must be ≥ 1", g.Context, g.Hop)
	}
	bands, err := checkTrain(train)
	if err != nil {
		return err
	}
	d := g.Context * bands
	var lw lwAccumulator
	lw.init(d)
	for _, c := range train {
		for v := range g.vectors(len(c)) {
			for k := range g.Context {
				row := c[v*g.Hop+k]
				for j, x := range row {
					lw.sum[k*bands+j] += x
				}
			}
			lw.n++
		}
	}
	if lw.n == 0 {
		return fmt.Errorf("evaluate: gaussian: no training clip has %d frames", g.Context)
	}
	lw.finishMean()
	var buf []float64
	for _, c := range train {
		if g.vectors(len(c)) == 0 {
			continue
		}
		m := g.stack(buf, c)
		buf = m.Data
		lw.addCentered(m)
	}
	cov, delta := lw.finish()
	var ch mat.Cholesky
	if !ch.Factorize(cov) {
		return fmt.Errorf("evaluate: gaussian: covariance of %d training vectors is not positive definite (no variation)", lw.n)
	}
	var u mat.TriDense
	ch.UTo(&u)
	g.Bands, g.Shrinkage, g.Vectors = bands, delta, lw.n
	g.mean = lw.mean
	g.chol = u.RawTriangular()
	return nil
}

// Score is the mean Mahalanobis distance √((x − μ)ᵀ Σ⁻¹ (x − μ)) of the
// clip's context vectors. It is NaN before a successful Fit, for a clip
// that is empty, ragged, holds a value that is not finite, has another
// band count than the training clips or fewer frames than the context.
func (g *Gaussian) Score(clip [][]float64) float64 {
	if g.mean == nil {
		return math.NaN()
	}
	b, err := checkClip(clip, 0)
	if err != nil || b != g.Bands || g.vectors(len(clip)) == 0 {
		return math.NaN()
	}
	m := g.stack(nil, clip)
	for i := range m.Rows {
		r := m.Data[i*m.Stride : i*m.Stride+m.Cols]
		for j := range r {
			r[j] -= g.mean[j]
		}
	}
	// Rows are (x − μ)ᵀ; solving Y·U = (X − μ) gives rows ((x − μ)ᵀU⁻¹),
	// whose squared norms are the squared distances.
	blas64.Trsm(blas.Right, blas.NoTrans, 1, g.chol, m)
	var sum float64
	for i := range m.Rows {
		r := m.Data[i*m.Stride : i*m.Stride+m.Cols]
		var q float64
		for _, v := range r {
			q += v * v
		}
		sum += math.Sqrt(q)
	}
	return sum / float64(m.Rows)
}
