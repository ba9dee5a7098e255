package features

import (
	"math/rand/v2"
	"testing"
)

// TestFilterbankVecMatchesLanes checks that Apply (vector kernel where
// there is one) gives exactly the bits of the portable four-lane loop.
func TestFilterbankVecMatchesLanes(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 2))
	for _, c := range []Config{
		{},
		{NFFT: 512, Bands: 40},
		{NFFT: 2048, Bands: 64, Scale: ScaleSlaney, Norm: NormArea},
		{NFFT: 256, Bands: 128},
	} {
		fb, err := NewFilterbank(c, 16000)
		if err != nil {
			t.Fatal(err)
		}
		spec := make([]float64, fb.Bins)
		for i := range spec {
			spec[i] = rng.ExpFloat64()
		}
		got := fb.Apply(nil, spec)
		want := make([]float64, fb.Bands)
		fb.applyLanes(want, spec, 0)
		for b := range want {
			if got[b] != want[b] {
				t.Fatalf("%+v band %d: %v, want %v", c, b, got[b], want[b])
			}
		}
	}
}
