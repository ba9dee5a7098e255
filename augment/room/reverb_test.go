package room

import (
	"math"
	"math/rand/v2"
	"sync"
	"testing"
)

func directConv(h, x []float64) []float64 {
	y := make([]float64, len(x))
	for n := range y {
		for k := 0; k < len(h) && k <= n; k++ {
			y[n] += h[k] * x[n-k]
		}
	}
	return y
}

func TestReverbMatchesDirectConvolution(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, tc := range []struct{ m, n int }{
		{1, 10}, {5, 3}, {7, 100}, {33, 64}, {100, 1000}, {300, 5000}, {1000, 999},
	} {
		h := make([]float64, tc.m)
		x := make([]float64, tc.n)
		for i := range h {
			h[i] = rng.NormFloat64() * math.Exp(-float64(i)/50)
		}
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		want := directConv(h, x)
		v := NewReverb(h, 16000)
		got := v.Apply(nil, x, 16000)
		lit := Reverb{IR: h}.Apply(nil, x, 8000) // literal: no cached FFT, no rate check
		inplace := append([]float64(nil), x...)
		inplace = v.Apply(inplace, inplace, 16000)
		for i := range want {
			tol := 1e-10 * (1 + math.Abs(want[i]))
			if math.Abs(got[i]-want[i]) > tol || math.Abs(lit[i]-want[i]) > tol || math.Abs(inplace[i]-want[i]) > tol {
				t.Fatalf("m=%d n=%d sample %d: got %g / %g / %g, want %g", tc.m, tc.n, i, got[i], lit[i], inplace[i], want[i])
			}
		}
	}
	if y := (Reverb{}).Apply(nil, []float64{1, 2}, 1); y[0] != 0 || y[1] != 0 {
		t.Errorf("empty IR: %v, want zeros", y)
	}
}

func TestReverbConcurrent(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	h := make([]float64, 500)
	x := make([]float64, 4000)
	for i := range h {
		h[i] = rng.NormFloat64()
	}
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	v := NewReverb(h, 0)
	want := v.Apply(nil, x, 16000)
	var wg sync.WaitGroup
	errs := make([]bool, 8)
	for g := range errs {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for r := 0; r < 5; r++ {
				y := v.Apply(nil, x, 16000)
				for i := range y {
					if math.Float64bits(y[i]) != math.Float64bits(want[i]) {
						errs[g] = true
						return
					}
				}
			}
		}()
	}
	wg.Wait()
	for g, bad := range errs {
		if bad {
			t.Errorf("goroutine %d got a different result", g)
		}
	}
}

func TestReverbRatePanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("rate mismatch did not panic")
		}
	}()
	NewReverb([]float64{1}, 16000).Apply(nil, []float64{1}, 48000)
}

func TestUnitEnergy(t *testing.T) {
	h := []float64{3, 0, -4}
	u := UnitEnergy(h)
	if math.Abs(u[0]-0.6) > 1e-15 || u[1] != 0 || math.Abs(u[2]+0.8) > 1e-15 {
		t.Errorf("UnitEnergy(%v) = %v, want [0.6 0 -0.8]", h, u)
	}
	if h[0] != 3 {
		t.Error("input modified")
	}
	if z := UnitEnergy([]float64{0, 0}); z[0] != 0 || z[1] != 0 {
		t.Errorf("zeros: %v", z)
	}
}
