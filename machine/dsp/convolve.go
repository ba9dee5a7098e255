package dsp

import (
	"math"
	"sync"
)

// Convolver computes causal linear convolutions with one fixed kernel h:
//
//	y[t] = Σ_k h[k]·x[t−k]
//
// by the cheapest of three methods for the sizes at hand: a direct sum
// (short kernels), one FFT of the whole signal, or overlap-save blocks of a
// smaller FFT length. The kernel spectrum is computed once per FFT length
// and cached. A Convolver is safe for concurrent use by several goroutines;
// each call draws its scratch from a per-size free list.
type Convolver struct {
	h  []float64 // kernel
	hr []float64 // kernel reversed, for the direct sum

	mu    sync.Mutex
	sizes map[int]*convSize
}

// convSize holds what one FFT length needs: the shared plan tables, the
// kernel spectrum scaled by 1/l (which folds in the inverse's
// normalisation), and a free list of per-call scratch. The free list (rather
// than a sync.Pool, which may drop entries) keeps calls allocation-free; it
// holds as many entries as calls ever ran at once.
type convSize struct {
	l    int
	t    *realTables
	spec []complex128

	mu   sync.Mutex
	free []*convWork
}

func (cs *convSize) get() *convWork {
	cs.mu.Lock()
	defer cs.mu.Unlock()
	if n := len(cs.free); n > 0 {
		w := cs.free[n-1]
		cs.free = cs.free[:n-1]
		return w
	}
	return &convWork{r: newRealFrom(cs.t), buf: make([]float64, cs.l)}
}

func (cs *convSize) put(w *convWork) {
	cs.mu.Lock()
	cs.free = append(cs.free, w)
	cs.mu.Unlock()
}

type convWork struct {
	r   *RealFFT
	buf []float64 // l samples
}

// NewConvolver returns a Convolver for kernel, which it copies. It panics if
// kernel is empty.
func NewConvolver(kernel []float64) *Convolver {
	if len(kernel) == 0 {
		panic("dsp: empty convolution kernel")
	}
	c := &Convolver{
		h:     append([]float64(nil), kernel...),
		hr:    make([]float64, len(kernel)),
		sizes: make(map[int]*convSize),
	}
	for i, v := range kernel {
		c.hr[len(kernel)-1-i] = v
	}
	return c
}

// Len returns the kernel length.
func (c *Convolver) Len() int { return len(c.h) }

// Apply returns the first len(x) samples of h ∗ x (the output is cut to the
// input length) in dst. If cap(dst) < len(x) a new slice is allocated. dst
// must not share memory with x.
func (c *Convolver) Apply(dst, x []float64) []float64 {
	return c.convolve(dst, x, len(x))
}

// ApplyFull returns the full linear convolution h ∗ x, len(x)+len(h)−1
// samples (none for an empty x), in dst. If cap(dst) is too small a new
// slice is allocated. dst must not share memory with x.
func (c *Convolver) ApplyFull(dst, x []float64) []float64 {
	if len(x) == 0 {
		return dst[:0]
	}
	return c.convolve(dst, x, len(x)+len(c.h)-1)
}

func (c *Convolver) convolve(dst, x []float64, outLen int) []float64 {
	dst = grow(dst, outLen)
	if outLen == 0 {
		return dst
	}
	l := c.choose(len(x), outLen)
	if l == 0 {
		c.direct(dst, x)
		return dst
	}
	c.overlapSave(dst, x, c.size(l))
	return dst
}

// Cost model, in nanoseconds per unit on a 2 GHz x86-64 core, fitted to this
// package's benchmarks: a real FFT of length l = 2^log costs about
// fftNs(log)·l·log, the per-block product and copies about blockNs·l, and
// one multiply-add of the direct sum directNs. Only the ratios matter.
const (
	blockNs  = 1.0
	directNs = 0.45
)

func fftNs(log int) float64 {
	// Beyond 2^12 points the working set leaves L1/L2 and the cost per
	// butterfly rises.
	return 0.4 + 0.05*math.Max(0, float64(log-12))
}

// blockCost estimates overlap-save with FFT length l for outLen outputs.
func (c *Convolver) blockCost(l, outLen int) float64 {
	hop := l - len(c.h) + 1
	blocks := (outLen + hop - 1) / hop
	log := 0
	for 1<<log < l {
		log++
	}
	return float64(blocks) * float64(l) * (2*fftNs(log)*float64(log) + blockNs)
}

// choose returns the FFT length to use for outLen outputs from n input
// samples, or 0 for the direct sum. It depends on the sizes only, so results
// are reproducible.
func (c *Convolver) choose(n, outLen int) int {
	k := len(c.h)
	best := 0
	bestCost := directNs * c.directMACs(n, outLen)
	maxL := NextPow2(outLen + k - 1)
	for l := max(2, NextPow2(k)); l <= maxL; l *= 2 {
		if l-k+1 < 1 {
			continue
		}
		if cost := c.blockCost(l, outLen); cost < bestCost {
			best, bestCost = l, cost
		}
	}
	return best
}

// directMACs counts the multiply-adds of the direct sum over an input of
// n samples for outLen outputs: n·K for the full length, fewer for the cut
// one, whose first outputs see only part of the kernel.
func (c *Convolver) directMACs(n, outLen int) float64 {
	k := len(c.h)
	if outLen > n {
		return float64(n) * float64(k)
	}
	if n <= k {
		return float64(n) * float64(n+1) / 2
	}
	return float64(k)*float64(k+1)/2 + float64(n-k)*float64(k)
}

// size returns the cached state for FFT length l, building it on first use.
func (c *Convolver) size(l int) *convSize {
	c.mu.Lock()
	defer c.mu.Unlock()
	if cs, ok := c.sizes[l]; ok {
		return cs
	}
	cs := &convSize{l: l, t: sharedRealTables(l)}
	w := cs.get()
	copy(w.buf, c.h)
	clear(w.buf[len(c.h):])
	cs.spec = w.r.Forward(nil, w.buf)
	inv := 1 / float64(l)
	for i, v := range cs.spec {
		cs.spec[i] = complex(real(v)*inv, imag(v)*inv)
	}
	cs.put(w)
	c.sizes[l] = cs
	return cs
}

// overlapSave fills dst (its full length) by overlap-save: block b covers
// outputs [b·hop, b·hop+hop) with hop = l−K+1, from the input segment that
// starts K−1 samples earlier; the first K−1 outputs of each circular
// convolution are discarded.
func (c *Convolver) overlapSave(dst, x []float64, cs *convSize) {
	w := cs.get()
	defer cs.put(w)
	k, l := len(c.h), cs.l
	hop := l - k + 1
	buf := w.buf[:l]
	for t0 := 0; t0 < len(dst); t0 += hop {
		s0 := t0 - (k - 1)
		// The segment is x[s0 : s0+l], zero outside [0, len(x)); interior
		// segments are read in place.
		seg := buf
		if s0 >= 0 && s0+l <= len(x) {
			seg = x[s0 : s0+l]
		} else {
			lo := max(0, -s0)
			hi := min(l, len(x)-s0)
			if hi <= lo {
				clear(buf)
			} else {
				clear(buf[:lo])
				copy(buf[lo:hi], x[s0+lo:s0+hi])
				clear(buf[hi:])
			}
		}
		w.r.filter(buf, seg, cs.spec)
		copy(dst[t0:min(len(dst), t0+hop)], buf[k-1:])
	}
}

// direct fills dst (its full length, at most len(x)+K−1) with the direct
// sum, as a dot product of the reversed kernel with the input window.
func (c *Convolver) direct(dst, x []float64) {
	k := len(c.h)
	n := len(x)
	for t := range dst {
		// Terms with 0 ≤ t−j < n for kernel index j = k−1−i.
		i0 := max(0, k-1-t)
		i1 := min(k, n+k-1-t)
		hs := c.hr[i0:i1]
		xs := x[t-k+1+i0 : t-k+1+i1]
		dst[t] = dot(hs, xs)
	}
}

// dot returns Σ a[i]·b[i] with four partial sums (fixed order, so the result
// is reproducible).
func dot(a, b []float64) float64 {
	b = b[:len(a)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(a); i += 4 {
		s0 += a[i] * b[i]
		s1 += a[i+1] * b[i+1]
		s2 += a[i+2] * b[i+2]
		s3 += a[i+3] * b[i+3]
	}
	for ; i < len(a); i++ {
		s0 += a[i] * b[i]
	}
	return (s0 + s1) + (s2 + s3)
}
