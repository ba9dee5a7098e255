package evaluate

import (
	"math/rand/v2"
	"testing"
)

// benchSet is a demo-sized set: 200 training clips and 100 clips to
// score, each 300 frames × 64 bands.
func benchSet() (train, test [][][]float64) {
	rng := rand.New(rand.NewPCG(1, 1))
	for range 200 {
		train = append(train, randClip(rng, 300, 64, -40))
	}
	for range 100 {
		test = append(test, randClip(rng, 300, 64, -39))
	}
	return train, test
}

// BenchmarkDetectors fits each detector on the training clips and scores
// the rest.
func BenchmarkDetectors(b *testing.B) {
	train, test := benchSet()
	for _, mk := range []func() Detector{
		func() Detector { return NewGaussianHop(5, 1) },
		func() Detector { return NewGaussian(5) },
		func() Detector { return NewKNN(2) },
	} {
		d := mk()
		name := d.Name()
		if g, ok := d.(*Gaussian); ok && g.Hop == 1 {
			name += "-hop1"
		}
		b.Run(name, func(b *testing.B) {
			for b.Loop() {
				if err := d.Fit(train); err != nil {
					b.Fatal(err)
				}
				for _, c := range test {
					d.Score(c)
				}
			}
		})
	}
}

func BenchmarkBootstrapAUC(b *testing.B) {
	rng := rand.New(rand.NewPCG(2, 2))
	s := make([]Scored, 400)
	for i := range s {
		s[i] = Scored{Score: rng.NormFloat64(), Anomalous: i%4 == 0, Group: string(rune('a' + i%40))}
	}
	for b.Loop() {
		BootstrapCI(s, AUC, 1000, 0.95, 1)
	}
}
