package evaluate

import (
	"fmt"
	"math"
	"slices"
)

// Embedding is a clip's summary vector: per band the mean over frames,
// then per band the standard deviation over frames (divided by the frame
// count), so its length is 2·B. It is nil for an empty or ragged clip.
func Embedding(clip [][]float64) []float64 {
	if len(clip) == 0 || len(clip[0]) == 0 {
		return nil
	}
	b := len(clip[0])
	e := make([]float64, 2*b)
	for _, row := range clip {
		if len(row) != b {
			return nil
		}
		for j, v := range row {
			e[j] += v
		}
	}
	n := float64(len(clip))
	for j := range b {
		e[j] /= n
	}
	for _, row := range clip {
		for j, v := range row {
			d := v - e[j]
			e[b+j] += d * d
		}
	}
	for j := range b {
		e[b+j] = math.Sqrt(e[b+j] / n)
	}
	return e
}

// standardizer holds per-element mean and standard deviation.
type standardizer struct{ mean, std []float64 }

// newStandardizer returns the mean and standard deviation (divided by n)
// of the rows of x; an element that does not vary gets a standard
// deviation of 1, so it is centred but not scaled.
func newStandardizer(x [][]float64) standardizer {
	p := len(x[0])
	s := standardizer{make([]float64, p), make([]float64, p)}
	for _, r := range x {
		for j, v := range r {
			s.mean[j] += v
		}
	}
	n := float64(len(x))
	for j := range s.mean {
		s.mean[j] /= n
	}
	for _, r := range x {
		for j, v := range r {
			d := v - s.mean[j]
			s.std[j] += d * d
		}
	}
	for j := range s.std {
		s.std[j] = math.Sqrt(s.std[j] / n)
		if !(s.std[j] > 0) {
			s.std[j] = 1
		}
	}
	return s
}

func (s standardizer) apply(v []float64) []float64 {
	out := make([]float64, len(v))
	for j, x := range v {
		out[j] = (x - s.mean[j]) / s.std[j]
	}
	return out
}

func sqDist(a, b []float64) float64 {
	var s float64
	for j := range a {
		d := a[j] - b[j]
		s += d * d
	}
	return s
}

// KNN is the detector NewKNN returns.
type KNN struct {
	// K is the number of nearest training embeddings averaged; a K above
	// the number of training clips uses them all.
	K int
	// Bands is the band count seen in training (0 before Fit).
	Bands int

	std   standardizer
	train [][]float64 // standardised embeddings
}

// NewKNN returns the k-nearest-neighbour detector on clip embeddings
// (Embedding), standardised with the training clips' mean and standard
// deviation; the score is the mean Euclidean distance to the k nearest
// training embeddings.
func NewKNN(k int) Detector { return &KNN{K: k} }

// Name returns "knn".
func (d *KNN) Name() string { return "knn" }

// Fit stores the standardised embeddings of the training clips. It fails
// on empty or ragged input, values that are not finite, or k below 1.
func (d *KNN) Fit(train [][][]float64) error {
	d.Bands, d.train = 0, nil
	if d.K < 1 {
		return fmt.Errorf("evaluate: knn k %d must be ≥ 1", d.K)
	}
	bands, err := checkTrain(train)
	if err != nil {
		return err
	}
	emb := make([][]float64, len(train))
	for i, c := range train {
		emb[i] = Embedding(c)
	}
	d.std = newStandardizer(emb)
	d.train = make([][]float64, len(emb))
	for i, e := range emb {
		d.train[i] = d.std.apply(e)
	}
	d.Bands = bands
	return nil
}

// Score is the mean Euclidean distance from the clip's standardised
// embedding to its K nearest training embeddings. It is NaN before a
// successful Fit and for a clip that is empty, ragged, holds a value that
// is not finite or has another band count than the training clips.
func (d *KNN) Score(clip [][]float64) float64 {
	if d.train == nil {
		return math.NaN()
	}
	b, err := checkClip(clip, 0)
	if err != nil || b != d.Bands {
		return math.NaN()
	}
	e := d.std.apply(Embedding(clip))
	dist := make([]float64, len(d.train))
	for i, t := range d.train {
		dist[i] = math.Sqrt(sqDist(e, t))
	}
	slices.Sort(dist)
	k := min(d.K, len(dist))
	var s float64
	for _, v := range dist[:k] {
		s += v
	}
	return s / float64(k)
}
