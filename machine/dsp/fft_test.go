package dsp

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

func randReal(rng *rand.Rand, n int) []float64 {
	x := make([]float64, n)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	return x
}

func randComplex(rng *rand.Rand, n int) []complex128 {
	x := make([]complex128, n)
	for i := range x {
		x[i] = complex(rng.NormFloat64(), rng.NormFloat64())
	}
	return x
}

// relErr returns max|got−want| / max|want|.
func relErr(got, want []complex128) float64 {
	var e, m float64
	for i := range want {
		e = math.Max(e, cmplx.Abs(got[i]-want[i]))
		m = math.Max(m, cmplx.Abs(want[i]))
	}
	return e / m
}

func log2(n int) int {
	l := 0
	for 1<<l < n {
		l++
	}
	return l
}

// naiveDFT evaluates the DFT sum of the definition directly, O(n²), with
// each kernel value from math.Sincos of the reduced angle.
func naiveDFT(x []complex128, sign float64) []complex128 {
	n := len(x)
	out := make([]complex128, n)
	for k := range out {
		var s complex128
		for t, v := range x {
			si, co := math.Sincos(2 * math.Pi * float64((k*t)%n) / float64(n))
			s += v * complex(co, sign*si)
		}
		out[k] = s
	}
	return out
}

func TestNextPow2(t *testing.T) {
	for _, c := range []struct{ n, want int }{
		{-3, 1}, {0, 1}, {1, 1}, {2, 2}, {3, 4}, {1000, 1024}, {1024, 1024}, {1025, 2048},
	} {
		if got := NextPow2(c.n); got != c.want {
			t.Errorf("NextPow2(%d) = %d, want %d", c.n, got, c.want)
		}
	}
}

// TestRealMatchesGonum compares Forward with gonum's dsp/fourier FFT (a
// general-purpose FFTPACK port) on random data.
func TestRealMatchesGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for n := 2; n <= 1<<20; n *= 2 {
		x := randReal(rng, n)
		want := fourier.NewFFT(n).Coefficients(nil, x)
		got := NewRealFFT(n).Forward(nil, x)
		if len(got) != n/2+1 {
			t.Fatalf("n=%d: %d bins, want %d", n, len(got), n/2+1)
		}
		// Both transforms carry O(ε·log n) relative rounding error.
		tol := 1e-15 * float64(log2(n)+1) * 4
		e := relErr(got, want)
		if e > tol {
			t.Errorf("n=%d: relative error %.3g vs gonum, tol %.3g", n, e, tol)
		}
		t.Logf("n=%d: relative error %.3g vs gonum", n, e)
	}
}

// TestComplexMatchesGonum compares ComplexFFT.Forward with gonum's CmplxFFT.
func TestComplexMatchesGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for n := 1; n <= 1<<18; n *= 2 {
		x := randComplex(rng, n)
		want := fourier.NewCmplxFFT(n).Coefficients(nil, x)
		got := NewComplexFFT(n).Forward(nil, x)
		tol := 1e-15 * float64(log2(n)+1) * 4
		if e := relErr(got, want); e > tol {
			t.Errorf("n=%d: relative error %.3g vs gonum, tol %.3g", n, e, tol)
		}
	}
}

// TestComplexMatchesDefinition checks both directions against the DFT sum
// evaluated directly.
func TestComplexMatchesDefinition(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 3))
	for n := 1; n <= 256; n *= 2 {
		x := randComplex(rng, n)
		p := NewComplexFFT(n)
		tol := 1e-15 * float64(log2(n)+1) * 8
		if e := relErr(p.Forward(nil, x), naiveDFT(x, -1)); e > tol {
			t.Errorf("n=%d forward: relative error %.3g, tol %.3g", n, e, tol)
		}
		if e := relErr(p.Inverse(nil, x), naiveDFT(x, +1)); e > tol {
			t.Errorf("n=%d inverse: relative error %.3g, tol %.3g", n, e, tol)
		}
	}
}

// TestCosineBin: a unit cosine at bin k has X[k] = n/2 and no other energy
// (DFT of a sampled cosine, e.g. Oppenheim & Schafer, Discrete-Time Signal
// Processing, ch. 8 (from memory)).
func TestCosineBin(t *testing.T) {
	for _, c := range []struct{ n, k int }{
		{8, 1}, {64, 5}, {1024, 10}, {1024, 511}, {4096, 1000}, {1 << 16, 12345},
	} {
		x := make([]float64, c.n)
		for i := range x {
			x[i] = math.Cos(2 * math.Pi * float64((c.k*i)%c.n) / float64(c.n))
		}
		X := NewRealFFT(c.n).Forward(nil, x)
		tol := 1e-12 * float64(c.n)
		for k, v := range X {
			want := 0.0
			if k == c.k {
				want = float64(c.n) / 2
			}
			if math.Abs(cmplx.Abs(v)-want) > tol {
				t.Errorf("n=%d k=%d: |X[%d]| = %g, want %g", c.n, c.k, k, cmplx.Abs(v), want)
			}
		}
	}
}

// TestParseval: Σx² = (1/n)Σ|X|² over the full spectrum (Parseval's
// theorem for the DFT, Oppenheim & Schafer, Discrete-Time Signal
// Processing, 3rd ed., §8.6 (from memory)); the one-sided bins 1 … n/2−1
// stand for two. Also checks PowerSpectrum against |Forward|².
func TestParseval(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 1))
	for n := 2; n <= 1<<16; n *= 4 {
		x := randReal(rng, n)
		p := NewRealFFT(n)
		X := p.Forward(nil, x)
		ps := p.PowerSpectrum(nil, x)
		var ex, ef float64
		for _, v := range x {
			ex += v * v
		}
		for k, v := range X {
			a := real(v)*real(v) + imag(v)*imag(v)
			if d := math.Abs(ps[k] - a); d > 1e-12*math.Max(a, 1) {
				t.Errorf("n=%d: PowerSpectrum[%d] = %g, |X|² = %g", n, k, ps[k], a)
			}
			if k == 0 || k == n/2 {
				ef += a
			} else {
				ef += 2 * a
			}
		}
		ef /= float64(n)
		if math.Abs(ex-ef) > 1e-12*ex {
			t.Errorf("n=%d: Σx² = %.15g, (1/n)Σ|X|² = %.15g", n, ex, ef)
		}
	}
}

// TestPowerSpectrum32 checks that float32 input gives exactly the float64
// result on the converted samples (the arithmetic is float64 throughout).
func TestPowerSpectrum32(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 2))
	for n := 2; n <= 1<<13; n *= 2 {
		x32 := make([]float32, n)
		x64 := make([]float64, n)
		for i := range x32 {
			x32[i] = float32(rng.NormFloat64())
			x64[i] = float64(x32[i])
		}
		p := NewRealFFT(n)
		a := p.PowerSpectrum32(nil, x32)
		b := p.PowerSpectrum(nil, x64)
		for k := range b {
			if a[k] != b[k] {
				t.Fatalf("n=%d: bin %d: %g (float32 input) ≠ %g", n, k, a[k], b[k])
			}
		}
	}
}

func TestRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 1))
	for n := 2; n <= 1<<18; n *= 2 {
		x := randReal(rng, n)
		p := NewRealFFT(n)
		X := p.Forward(nil, x)
		// The imaginary parts of bins 0 and n/2 must be ignored.
		X[0] += 5i
		X[n/2] -= 3i
		y := p.Inverse(nil, X)
		var e, m float64
		for i := range x {
			e = math.Max(e, math.Abs(y[i]/float64(n)-x[i]))
			m = math.Max(m, math.Abs(x[i]))
		}
		if tol := 1e-15 * float64(log2(n)+1) * 4; e/m > tol {
			t.Errorf("real n=%d: round-trip error %.3g, tol %.3g", n, e/m, tol)
		}

		c := randComplex(rng, n)
		q := NewComplexFFT(n)
		d := q.Inverse(nil, q.Forward(nil, c))
		for i := range d {
			d[i] /= complex(float64(n), 0)
		}
		if tol := 1e-15 * float64(log2(n)+1) * 4; relErr(d, c) > tol {
			t.Errorf("complex n=%d: round-trip error %.3g, tol %.3g", n, relErr(d, c), tol)
		}
	}
}

// TestInPlaceComplex checks dst == src for ComplexFFT.
func TestInPlaceComplex(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 2))
	for n := 1; n <= 1<<10; n *= 2 {
		x := randComplex(rng, n)
		p := NewComplexFFT(n)
		want := p.Forward(nil, x)
		got := p.Forward(x, x)
		for i := range want {
			if got[i] != want[i] {
				t.Fatalf("n=%d: in-place bin %d = %v, want %v", n, i, got[i], want[i])
			}
		}
		wantInv := p.Inverse(nil, got)
		gotInv := p.Inverse(got, got)
		for i := range wantInv {
			if gotInv[i] != wantInv[i] {
				t.Fatalf("n=%d: in-place inverse %d = %v, want %v", n, i, gotInv[i], wantInv[i])
			}
		}
	}
}

// TestDstReuse checks that a roomy dst is resliced, not reallocated, and
// that results do not depend on its old contents.
func TestDstReuse(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	x := randReal(rng, 64)
	p := NewRealFFT(64)
	want := p.Forward(nil, x)
	buf := make([]complex128, 100)
	for i := range buf {
		buf[i] = complex(math.NaN(), 1)
	}
	got := p.Forward(buf, x)
	if len(got) != 33 || &got[0] != &buf[0] {
		t.Fatalf("Forward did not reuse dst: len %d", len(got))
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("bin %d = %v, want %v", i, got[i], want[i])
		}
	}
}

func TestAllocs(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 1))
	n := 1024
	x := randReal(rng, n)
	x32 := make([]float32, n)
	p := NewRealFFT(n)
	X := make([]complex128, n/2+1)
	y := make([]float64, n)
	ps := make([]float64, n/2+1)
	q := NewComplexFFT(n)
	c := randComplex(rng, n)
	d := make([]complex128, n)
	h := randReal(rng, 300)
	conv := NewConvolver(h)
	long := randReal(rng, 5000)
	out := make([]float64, len(long)+len(h))
	conv.Apply(out, long) // builds the cached spectrum
	conv.ApplyFull(out, long)
	for _, c := range []struct {
		name string
		f    func()
	}{
		{"RealFFT.Forward", func() { p.Forward(X, x) }},
		{"RealFFT.Inverse", func() { p.Inverse(y, X) }},
		{"RealFFT.PowerSpectrum", func() { p.PowerSpectrum(ps, x) }},
		{"RealFFT.PowerSpectrum32", func() { p.PowerSpectrum32(ps, x32) }},
		{"RealFFT.PowerSpectrumWindowed", func() { p.PowerSpectrumWindowed(ps, x, x) }},
		{"ComplexFFT.Forward", func() { q.Forward(d, c) }},
		{"ComplexFFT.Inverse", func() { q.Inverse(d, c) }},
		{"Convolver.Apply", func() { conv.Apply(out, long) }},
		{"Convolver.ApplyFull", func() { conv.ApplyFull(out, long) }},
	} {
		if a := testing.AllocsPerRun(20, c.f); a != 0 {
			t.Errorf("%s: %v allocations per call, want 0", c.name, a)
		}
	}
}

func TestPanics(t *testing.T) {
	for _, c := range []struct {
		name string
		f    func()
	}{
		{"NewRealFFT(0)", func() { NewRealFFT(0) }},
		{"NewRealFFT(1)", func() { NewRealFFT(1) }},
		{"NewRealFFT(12)", func() { NewRealFFT(12) }},
		{"NewComplexFFT(0)", func() { NewComplexFFT(0) }},
		{"NewComplexFFT(6)", func() { NewComplexFFT(6) }},
		{"Forward short src", func() { NewRealFFT(8).Forward(nil, make([]float64, 7)) }},
		{"Inverse short src", func() { NewRealFFT(8).Inverse(nil, make([]complex128, 4)) }},
		{"PowerSpectrum long src", func() { NewRealFFT(8).PowerSpectrum(nil, make([]float64, 9)) }},
		{"PowerSpectrum32 short src", func() { NewRealFFT(8).PowerSpectrum32(nil, make([]float32, 4)) }},
		{"ComplexFFT.Forward short src", func() { NewComplexFFT(8).Forward(nil, make([]complex128, 4)) }},
		{"ComplexFFT.Inverse long src", func() { NewComplexFFT(8).Inverse(nil, make([]complex128, 9)) }},
		{"NewConvolver(nil)", func() { NewConvolver(nil) }},
	} {
		func() {
			defer func() {
				r := recover()
				if r == nil {
					t.Errorf("%s: no panic", c.name)
					return
				}
				if s := fmt.Sprint(r); !strings.HasPrefix(s, "dsp: ") {
					t.Errorf("%s: panic %q lacks the dsp: prefix", c.name, s)
				}
			}()
			c.f()
		}()
	}
}

func TestLen(t *testing.T) {
	if got := NewRealFFT(512).Len(); got != 512 {
		t.Errorf("RealFFT.Len = %d", got)
	}
	if got := NewComplexFFT(64).Len(); got != 64 {
		t.Errorf("ComplexFFT.Len = %d", got)
	}
	if got := NewConvolver(make([]float64, 7)).Len(); got != 7 {
		t.Errorf("Convolver.Len = %d", got)
	}
}

// TestTwiddleExact checks the quadrant points and the symmetry of the
// directly computed twiddles.
func TestTwiddleExact(t *testing.T) {
	for _, n := range []int{4, 8, 1024, 1 << 20} {
		for q, want := range []complex128{1, -1i, -1, 1i} {
			if got := twiddle(q*n/4, n); got != want {
				t.Errorf("twiddle(%d, %d) = %v, want %v", q*n/4, n, got, want)
			}
		}
		for k := 1; k < n/8; k += 1 + n/64 {
			a, b := twiddle(k, n), twiddle(n/4-k, n)
			// e^{−iθ} and e^{−i(π/2−θ)} have swapped magnitudes of parts.
			if real(a) != -imag(b) || -imag(a) != real(b) {
				t.Errorf("n=%d k=%d: twiddles %v, %v not octant-symmetric", n, k, a, b)
			}
		}
	}
}
