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
