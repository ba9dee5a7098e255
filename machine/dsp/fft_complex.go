package dsp

import "fmt"

// ComplexFFT is a plan for complex FFTs of one power-of-two length. Like RealFFT it
// holds scratch space and must not be used by several goroutines at once.
type ComplexFFT struct {
	pl   *plan
	a, b []complex128
}

// NewComplexFFT returns a plan for complex sequences of length n. It panics if
// n is not a power of two ≥ 1.
func NewComplexFFT(n int) *ComplexFFT {
	if !isPow2(n) {
		panic(fmt.Sprintf("dsp: complex length %d is not a power of two ≥ 1", n))
	}
	return &ComplexFFT{pl: newPlan(n), a: make([]complex128, n), b: make([]complex128, n)}
}

// Len returns the sequence length n.
func (p *ComplexFFT) Len() int { return p.pl.m }

// Forward computes X[k] = Σ_t x[t]·e^{−2πikt/n} (unnormalised) of src into
// dst and returns it. dst may be src itself (in-place) but must not overlap
// it otherwise. If cap(dst) < n a new slice is allocated. It panics if
// len(src) ≠ n.
func (p *ComplexFFT) Forward(dst, src []complex128) []complex128 {
	n := p.pl.m
	if len(src) != n {
		panic(fmt.Sprintf("dsp: source length %d, plan length %d", len(src), n))
	}
	dst = grow(dst, n)
	if &dst[0] == &src[0] {
		copy(p.b, src)
		src = p.b
	}
	p.into(dst, src)
	return dst
}

// Inverse computes x[t] = Σ_k X[k]·e^{+2πikt/n} (unnormalised:
// Inverse(Forward(x)) = n·x) of src into dst and returns it, with the same
// rules as Forward.
func (p *ComplexFFT) Inverse(dst, src []complex128) []complex128 {
	n := p.pl.m
	if len(src) != n {
		panic(fmt.Sprintf("dsp: source length %d, plan length %d", len(src), n))
	}
	dst = grow(dst, n)
	// x = conj(FFT(conj(X))).
	b := p.b[:len(src)]
	for i, v := range src {
		b[i] = complex(real(v), -imag(v))
	}
	p.into(dst, b)
	for i, v := range dst {
		dst[i] = complex(real(v), -imag(v))
	}
	return dst
}

// into runs the plan from src so that the result lands in dst.
func (p *ComplexFFT) into(dst, src []complex128) {
	if p.pl.npass()%2 == 1 || p.pl.npass() == 0 {
		p.pl.run(src, dst, p.a)
	} else {
		p.pl.run(src, p.a, dst)
	}
}
