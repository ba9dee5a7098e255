package dsp

import (
	"fmt"
	"sync"
)

// NextPow2 returns the smallest power of two ≥ n (1 for n ≤ 1).
func NextPow2(n int) int {
	p := 1
	for p < n {
		p <<= 1
	}
	return p
}

func isPow2(n int) bool { return n > 0 && n&(n-1) == 0 }

// realTables is the immutable, shareable part of a real plan.
type realTables struct {
	n    int
	pl   *plan        // complex plan of size n/2
	post []complex128 // e^{−2πik/n}, k = 0 … n/4
}

// tablesMemo holds the tables of every real-FFT size built in this process,
// keyed by length. Tables are immutable once built, so every plan of a size
// shares them: building them (mostly sines and cosines) costs as much as
// dozens of transforms, and a run builds many short-lived plans (one FFT
// convolver per impulse-response use). Memory grows with the number of
// distinct sizes only.
var tablesMemo sync.Map

// sharedRealTables returns the memoised tables of length n.
func sharedRealTables(n int) *realTables {
	if t, ok := tablesMemo.Load(n); ok {
		return t.(*realTables)
	}
	t, _ := tablesMemo.LoadOrStore(n, newRealTables(n))
	return t.(*realTables)
}

func newRealTables(n int) *realTables {
	if n < 2 || !isPow2(n) {
		panic(fmt.Sprintf("dsp: real length %d is not a power of two ≥ 2", n))
	}
	m := n / 2
	t := &realTables{n: n, pl: newPlan(m), post: make([]complex128, m/2+1)}
	for k := range t.post {
		t.post[k] = twiddle(k, n)
	}
	return t
}

// RealFFT is a plan for real FFTs of one power-of-two length. The twiddle
// tables are computed once by NewRealFFT; the plan also holds scratch space, so
// a RealFFT must not be used by several goroutines at once.
type RealFFT struct {
	t    *realTables
	a, b []complex128 // scratch, n/2 each
	xw   []float64    // windowed input, n (made on first use)
}

// NewRealFFT returns a plan for real sequences of length n. It panics if n is
// not a power of two ≥ 2.
func NewRealFFT(n int) *RealFFT { return newRealFrom(sharedRealTables(n)) }

func newRealFrom(t *realTables) *RealFFT {
	m := t.n / 2
	return &RealFFT{t: t, a: make([]complex128, m), b: make([]complex128, m)}
}

// Len returns the sequence length n.
func (p *RealFFT) Len() int { return p.t.n }

func (p *RealFFT) checkSrc(n int) {
	if n != p.t.n {
		panic(fmt.Sprintf("dsp: source length %d, plan length %d", n, p.t.n))
	}
}

// Forward computes the n/2+1 one-sided coefficients
// X[k] = Σ_t x[t]·e^{−2πikt/n}, k = 0 … n/2 (unnormalised) of src into dst
// and returns it. If cap(dst) < n/2+1 a new slice is allocated. It panics if
// len(src) ≠ n.
func (p *RealFFT) Forward(dst []complex128, src []float64) []complex128 {
	p.checkSrc(len(src))
	m := p.t.n / 2
	dst = grow(dst, m+1)
	z := p.zspec(src, dst[:m])
	post(dst, z, p.t.post)
	return dst
}

// zspec computes Z = FFT_m(z) for z[j] = src[2j] + i·src[2j+1], preferring
// out as the result buffer.
func (p *RealFFT) zspec(src []float64, out []complex128) []complex128 {
	pl := p.t.pl
	if pl.npass()%2 == 1 || pl.npass() == 0 {
		return runReal(pl, src, out, p.a)
	}
	return runReal(pl, src, p.a, out)
}

// post turns Z (length m) into the one-sided real spectrum X (length m+1);
// z may be X[:m] itself. With E/O the spectra of the even/odd samples,
// E[k] = (Z[k] + Z*[m−k])/2, O[k] = (Z[k] − Z*[m−k])/(2i),
// X[k] = E[k] + W^k·O[k] and X[m−k] = (E[k] − W^k·O[k])*, W = e^{−2πi/n}.
func post(x, z, w []complex128) {
	m := len(z)
	z0 := z[0]
	x[0] = complex(real(z0)+imag(z0), 0)
	x[m] = complex(real(z0)-imag(z0), 0)
	if m < 2 {
		return
	}
	h := m / 2
	w = w[:h+1]
	x = x[:m+1]
	z = z[:m]
	for k := 1; k <= h; k++ {
		j := m - k
		zk, zj := z[k], z[j]
		// e = (zk + conj(zj))/2 ; o' = (zk − conj(zj))/2 so O = −i·o'.
		er := 0.5 * (real(zk) + real(zj))
		ei := 0.5 * (imag(zk) - imag(zj))
		or := 0.5 * (imag(zk) + imag(zj)) // O = (o'i, −o'r)
		oi := -0.5 * (real(zk) - real(zj))
		wk := w[k]
		tr := real(wk)*or - imag(wk)*oi
		ti := real(wk)*oi + imag(wk)*or
		x[k] = complex(er+tr, ei+ti)
		x[j] = complex(er-tr, ti-ei)
	}
}

// PowerSpectrum computes |X[k]|², k = 0 … n/2, of src (see Forward) into
// dst and returns it. If cap(dst) < n/2+1 a new slice is allocated. It
// panics if len(src) ≠ n.
func (p *RealFFT) PowerSpectrum(dst []float64, src []float64) []float64 {
	p.checkSrc(len(src))
	dst = grow(dst, p.t.n/2+1)
	z := runReal(p.t.pl, src, p.a, p.b)
	postPower(dst, z, p.t.post)
	return dst
}

// PowerSpectrum32 is PowerSpectrum for float32 samples; arithmetic is in
// float64.
func (p *RealFFT) PowerSpectrum32(dst []float64, src []float32) []float64 {
	p.checkSrc(len(src))
	dst = grow(dst, p.t.n/2+1)
	z := runReal(p.t.pl, src, p.a, p.b)
	postPower(dst, z, p.t.post)
	return dst
}

// postPower is post followed by |·|².
func postPower(x []float64, z, w []complex128) {
	m := len(z)
	z0 := z[0]
	d0 := real(z0) + imag(z0)
	dm := real(z0) - imag(z0)
	x[0] = d0 * d0
	x[m] = dm * dm
	if m < 2 || postPowerVec(x, z, w) {
		return
	}
	postPowerGo(x, z, w)
}

// postPowerGo is the portable loop of postPower over bins 1 … m−1.
func postPowerGo(x []float64, z, w []complex128) {
	m := len(z)
	h := m / 2
	w = w[:h+1]
	x = x[:m+1]
	z = z[:m]
	for k := 1; k <= h; k++ {
		j := m - k
		zk, zj := z[k], z[j]
		er := 0.5 * (real(zk) + real(zj))
		ei := 0.5 * (imag(zk) - imag(zj))
		or := 0.5 * (imag(zk) + imag(zj))
		oi := -0.5 * (real(zk) - real(zj))
		wk := w[k]
		tr := real(wk)*or - imag(wk)*oi
		ti := real(wk)*oi + imag(wk)*or
		ar, ai := er+tr, ei+ti
		br, bi := er-tr, ti-ei
		x[k] = ar*ar + ai*ai
		x[j] = br*br + bi*bi
	}
}

// Inverse computes x[t] = Σ_k X[k]·e^{+2πikt/n} over the full spectrum
// rebuilt by Hermitian symmetry from the n/2+1 bins in src (unnormalised:
// Inverse(Forward(x)) = n·x). The imaginary parts of bins 0 and n/2 are
// ignored. If cap(dst) < n a new slice is allocated. It panics if
// len(src) ≠ n/2+1.
func (p *RealFFT) Inverse(dst []float64, src []complex128) []float64 {
	n, m := p.t.n, p.t.n/2
	if len(src) != m+1 {
		panic(fmt.Sprintf("dsp: spectrum length %d, want %d", len(src), m+1))
	}
	dst = grow(dst, n)
	pre(p.a, src, p.t.post)
	// The inverse is conj(FFT(conj(Z))); pre already wrote conj(Z).
	p.t.pl.runConjReal(dst, p.a, p.b)
	return dst
}

// filter sets dst (length n) to the unnormalised inverse of
// Forward(src)·h, where h holds n/2+1 bins of a real sequence's spectrum:
// the circular convolution of src with that sequence, times n. It fuses
// Forward's split pass, the product and Inverse's merge pass into one loop.
func (p *RealFFT) filter(dst, src []float64, h []complex128) {
	z := runReal(p.t.pl, src, p.a, p.b)
	other := p.b
	if &z[0] == &p.b[0] {
		other = p.a
	}
	mulPacked(z, h, p.t.post)
	p.t.pl.runConjReal(dst, z, other)
}

// mulPacked turns the packed spectrum Z of a real sequence (see post) into
// conj(2·Z') for the packed spectrum Z' of the product X·H (see pre), in
// place.
func mulPacked(z, h, w []complex128) {
	m := len(z)
	z0 := z[0]
	x0 := (real(z0) + imag(z0)) * real(h[0])
	xm := (real(z0) - imag(z0)) * real(h[m])
	z[0] = complex(x0+xm, -(x0 - xm))
	if m < 2 {
		return
	}
	half := m / 2
	w = w[:half+1]
	h = h[:m+1]
	for k := 1; k <= half; k++ {
		j := m - k
		zk, zj := z[k], z[j]
		// post: X[k] = e + t, X[j] = (e − t)*.
		er := 0.5 * (real(zk) + real(zj))
		ei := 0.5 * (imag(zk) - imag(zj))
		or := 0.5 * (imag(zk) + imag(zj))
		oi := -0.5 * (real(zk) - real(zj))
		wk := w[k]
		tr := real(wk)*or - imag(wk)*oi
		ti := real(wk)*oi + imag(wk)*or
		xk := complex(er+tr, ei+ti) * h[k]
		xj := complex(er-tr, ti-ei) * h[j]
		// pre on the products.
		fr := real(xk) + real(xj)
		fi := imag(xk) - imag(xj)
		dr := real(xk) - real(xj)
		di := imag(xk) + imag(xj)
		ur := real(wk)*dr + imag(wk)*di
		ui := real(wk)*di - imag(wk)*dr
		z[k] = complex(fr-ui, -(fi + ur))
		z[j] = complex(fr+ui, -(ur - fi))
	}
}

// pre builds conj(2·Z) from the one-sided spectrum x, inverting post:
// Z[k] = (X[k] + X*[m−k]) + i·W^{−k}·(X[k] − X*[m−k]).
func pre(z, x, w []complex128) {
	m := len(z)
	x0, xm := real(x[0]), real(x[m])
	// Z[0] = (X0 + Xm) + i(X0 − Xm); store its conjugate.
	z[0] = complex(x0+xm, -(x0 - xm))
	if m < 2 {
		return
	}
	h := m / 2
	w = w[:h+1]
	x = x[:m+1]
	z = z[:m]
	for k := 1; k <= h; k++ {
		j := m - k
		xk, xj := x[k], x[j]
		er := real(xk) + real(xj)
		ei := imag(xk) - imag(xj)
		dr := real(xk) - real(xj)
		di := imag(xk) + imag(xj)
		// t = conj(W^k)·d, then i·t.
		wk := w[k]
		tr := real(wk)*dr + imag(wk)*di
		ti := real(wk)*di - imag(wk)*dr
		// 2Z[k] = e + i·t; 2Z[m−k] = e* + i·t* (E and O are Hermitian).
		z[k] = complex(er-ti, -(ei + tr))
		z[j] = complex(er+ti, -(tr - ei))
	}
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// PowerSpectrumWindowed is PowerSpectrum of the windowed sequence
// src[t]·win[t] (each product rounded once, as a separate multiply would).
// It panics if len(src) or len(win) ≠ n.
func (p *RealFFT) PowerSpectrumWindowed(dst, src, win []float64) []float64 {
	p.checkSrc(len(src))
	p.checkSrc(len(win))
	if p.xw == nil {
		p.xw = make([]float64, p.t.n)
	}
	mulInto(p.xw, src, win)
	return p.PowerSpectrum(dst, p.xw)
}

func mulGo(dst, a, b []float64) {
	a, b = a[:len(dst)], b[:len(dst)]
	for i := range dst {
		dst[i] = a[i] * b[i]
	}
}
