package dsp

import (
	"math/rand/v2"
	"testing"
)

// TestPass4VecBitIdentical checks that the vector radix-4 pass gives
// exactly the bits of the portable loops it replaces.
func TestPass4VecBitIdentical(t *testing.T) {
	if !HasAVX {
		t.Skip("no vector kernel on this machine or build")
	}
	rng := rand.New(rand.NewPCG(7, 1))
	for _, m := range []int{8, 16, 32, 64, 128, 256, 512, 1024, 4096} {
		pl := newPlan(m)
		x := make([]complex128, m)
		for i := range x {
			x[i] = complex(rng.NormFloat64(), rng.NormFloat64())
		}
		for _, p := range pl.passes {
			if p.radix != 4 {
				continue
			}
			s := m / p.l
			if s < 2 {
				continue
			}
			want := make([]complex128, m)
			switch {
			case p.l == 4:
				pass4Last(want, x)
			case s < 16:
				pass4Flat(want, x, s, p.w[0], p.w[1], p.w[2])
			default:
				pass4(want, x, s, p.w[0], p.w[1], p.w[2])
			}
			got := make([]complex128, m)
			if !pass4Vec(got, x, p.l, s, p.w[0], p.w[1], p.w[2]) {
				t.Fatalf("m=%d l=%d: vector pass declined", m, p.l)
			}
			for i := range want {
				if got[i] != want[i] {
					t.Fatalf("m=%d l=%d s=%d: y[%d] = %v, want %v", m, p.l, s, i, got[i], want[i])
				}
			}
		}
	}
}

// TestPass8FirstVecBitIdentical checks the vector first radix-8 pass of
// a real sequence against the portable loop, bit for bit.
func TestPass8FirstVecBitIdentical(t *testing.T) {
	if !HasAVX {
		t.Skip("no vector kernel on this machine or build")
	}
	rng := rand.New(rand.NewPCG(8, 1))
	for _, m := range []int{32, 128, 512, 2048, 8192} {
		pl := newPlan(m)
		p := &pl.passes[0]
		if p.radix != 8 {
			t.Fatalf("m=%d: first pass radix %d", m, p.radix)
		}
		x := make([]float64, 2*m)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		want := make([]complex128, m)
		pass8FirstReal(want, x, &p.w)
		got := make([]complex128, m)
		if !pass8FirstVec(got, x, p.w8) {
			t.Fatalf("m=%d: vector pass declined", m)
		}
		for i := range want {
			if got[i] != want[i] {
				t.Fatalf("m=%d: y[%d] = %v, want %v", m, i, got[i], want[i])
			}
		}
	}
}

// TestPostPowerVecBitIdentical checks the vector split-and-square pass
// against the portable loop, bit for bit.
func TestPostPowerVecBitIdentical(t *testing.T) {
	if !HasAVX2 {
		t.Skip("no vector kernel on this machine or build")
	}
	rng := rand.New(rand.NewPCG(9, 1))
	for _, m := range []int{4, 8, 64, 512, 4096} {
		tb := newRealTables(2 * m)
		z := make([]complex128, m)
		for i := range z {
			z[i] = complex(rng.NormFloat64(), rng.NormFloat64())
		}
		want := make([]float64, m+1)
		got := make([]float64, m+1)
		postPower(got, z, tb.post)
		// The portable loop, forced.
		z0 := z[0]
		want[0] = (real(z0) + imag(z0)) * (real(z0) + imag(z0))
		want[m] = (real(z0) - imag(z0)) * (real(z0) - imag(z0))
		postPowerGo(want, z, tb.post)
		for i := range want {
			if got[i] != want[i] {
				t.Fatalf("m=%d: x[%d] = %v, want %v", m, i, got[i], want[i])
			}
		}
	}
}

// TestPowerSpectrumWindowed checks that the fused window gives exactly the
// bits of multiplying first and calling PowerSpectrum, for lengths with and
// without a vector tail.
func TestPowerSpectrumWindowed(t *testing.T) {
	rng := rand.New(rand.NewPCG(10, 1))
	for _, n := range []int{2, 4, 8, 16, 1024, 4096} {
		p := NewRealFFT(n)
		x := make([]float64, n)
		w := make([]float64, n)
		xw := make([]float64, n)
		for i := range x {
			x[i], w[i] = rng.NormFloat64(), rng.Float64()
			xw[i] = x[i] * w[i]
		}
		want := p.PowerSpectrum(nil, xw)
		got := p.PowerSpectrumWindowed(nil, x, w)
		for k := range want {
			if got[k] != want[k] {
				t.Fatalf("n=%d: bin %d = %v, want %v", n, k, got[k], want[k])
			}
		}
	}
}
