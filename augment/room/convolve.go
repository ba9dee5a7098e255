package room

import (
	"sync"

	"gonum.org/v1/gonum/dsp/fourier"
)

// convolver is a causal overlap-add FFT convolution with a fixed kernel
// whose spectrum is computed once. It is safe for concurrent use: each call
// takes its FFT plan and buffers from a pool.
type convolver struct {
	m    int          // kernel length
	size int          // FFT size, a power of two ≥ 2m
	blk  int          // input block length size − m + 1 (≥ m)
	spec []complex128 // kernel spectrum, size/2+1 bins, scaled by 1/size
	pool sync.Pool    // *convWork
}

type convWork struct {
	plan  *fourier.FFT
	seq   []float64
	coef  []complex128
	carry []float64
}

func newConvolver(kernel []float64) *convolver {
	m := len(kernel)
	c := &convolver{m: m}
	if m == 0 {
		return c
	}
	c.size = 64
	for c.size < 2*m {
		c.size <<= 1
	}
	c.blk = c.size - m + 1
	plan := fourier.NewFFT(c.size)
	seq := make([]float64, c.size)
	copy(seq, kernel)
	c.spec = plan.Coefficients(nil, seq)
	scale := complex(1/float64(c.size), 0)
	for i := range c.spec {
		c.spec[i] *= scale
	}
	c.pool.New = func() any {
		return &convWork{
			plan:  fourier.NewFFT(c.size),
			seq:   make([]float64, c.size),
			coef:  make([]complex128, c.size/2+1),
			carry: make([]float64, c.m),
		}
	}
	return c
}

// apply writes (kernel * x)[0:len(x)] into dst (nil allocates). dst may be x
// itself; any other overlap is not allowed.
func (c *convolver) apply(dst, x []float64) []float64 {
	if cap(dst) < len(x) {
		dst = make([]float64, len(x))
	}
	dst = dst[:len(x)]
	if c.m == 0 {
		clear(dst)
		return dst
	}
	w := c.pool.Get().(*convWork)
	defer c.pool.Put(w)
	clear(w.carry)
	tail := c.m - 1
	for off := 0; off < len(x); off += c.blk {
		lb := min(c.blk, len(x)-off)
		copy(w.seq, x[off:off+lb])
		clear(w.seq[lb:])
		w.plan.Coefficients(w.coef, w.seq)
		for i, h := range c.spec {
			w.coef[i] *= h
		}
		w.plan.Sequence(w.seq, w.coef)
		// The carry (≤ m−1 ≤ blk samples) overlaps the start of this block.
		for i := 0; i < tail; i++ {
			w.seq[i] += w.carry[i]
		}
		copy(dst[off:off+lb], w.seq[:lb])
		copy(w.carry[:tail], w.seq[lb:lb+tail])
	}
	return dst
}
