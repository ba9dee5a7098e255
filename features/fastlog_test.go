package features

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestLog10Fast(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 10))
	worst := 0.0
	for range 200000 {
		x := math.Exp(rng.Float64()*1400 - 700)
		worst = math.Max(worst, math.Abs(log10Fast(x)-math.Log10(x)))
	}
	for _, x := range []float64{1, 2, math.Sqrt2, math.Nextafter(math.Sqrt2, 3), 10, 1e-10, 1e300, 0.5} {
		worst = math.Max(worst, math.Abs(log10Fast(x)-math.Log10(x)))
	}
	if worst > 1e-12 {
		t.Errorf("worst error %v against math.Log10", worst)
	}
	for _, x := range []float64{0, -1, math.Inf(1), math.NaN(), 4e-320} {
		got, want := log10Fast(x), math.Log10(x)
		if !(got == want || (math.IsNaN(got) && math.IsNaN(want))) {
			t.Errorf("log10Fast(%v) = %v, want %v", x, got, want)
		}
	}
}

func BenchmarkLog10Fast(b *testing.B) {
	x := 1.2345e-3
	var s float64
	for b.Loop() {
		s += log10Fast(x)
		x *= 1.0000001
	}
	_ = s
}

func BenchmarkLog10Math(b *testing.B) {
	x := 1.2345e-3
	var s float64
	for b.Loop() {
		s += math.Log10(x)
		x *= 1.0000001
	}
	_ = s
}

// TestLog10RowEps checks the row kernel against the scalar log10Fast bit
// for bit, over a wide range, with rows that hold special values (which
// send the whole row to the scalar path) and lengths with a tail.
func TestLog10RowEps(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 3))
	for _, n := range []int{1, 4, 7, 128, 1000} {
		for _, special := range []float64{0, -1, math.Inf(1), math.NaN(), 4e-320, -2e-10} {
			src := make([]float64, n)
			for i := range src {
				src[i] = math.Exp(rng.Float64()*600 - 300)
			}
			if special != 0 {
				src[n/2] = special
			}
			got := make([]float32, n)
			log10RowEps(got, src, NumpyEpsilon)
			for i, v := range src {
				want := float32(log10Fast(v + NumpyEpsilon))
				if math.Float32bits(got[i]) != math.Float32bits(want) {
					t.Fatalf("n=%d special=%v: dst[%d] = %v, want %v", n, special, i, got[i], want)
				}
			}
		}
	}
}
