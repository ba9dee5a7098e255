package dsp

import (
	"math"
	"math/rand/v2"
	"sync"
	"testing"
)

// naiveConv is the convolution sum y[t] = Σ_k h[k]·x[t−k] of the definition,
// evaluated term by term.
func naiveConv(h, x []float64, outLen int) []float64 {
	y := make([]float64, outLen)
	for t := range y {
		var s float64
		for k := range h {
			if j := t - k; j >= 0 && j < len(x) {
				s += h[k] * x[j]
			}
		}
		y[t] = s
	}
	return y
}

// convErr returns max|got−want| / max|want| (0 when want is all zero and
// got matches).
func convErr(got, want []float64) float64 {
	var e, m float64
	for i := range want {
		e = math.Max(e, math.Abs(got[i]-want[i]))
		m = math.Max(m, math.Abs(want[i]))
	}
	if m == 0 {
		return e
	}
	return e / m
}

var convCases = []struct{ k, n int }{
	{1, 1}, {1, 10}, {1, 1000},
	{2, 1}, {3, 100}, {7, 5},
	{17, 1}, {64, 1000}, {100, 100},
	{500, 300}, {1000, 20000}, {255, 4096},
	{256, 4097}, {4097, 5000}, {3000, 200},
	{12800, 3000},
}

func TestConvolverMatchesDirectSum(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 1))
	for _, c := range convCases {
		h := randReal(rng, c.k)
		x := randReal(rng, c.n)
		cv := NewConvolver(h)
		full := naiveConv(h, x, c.n+c.k-1)
		got := cv.ApplyFull(nil, x)
		if len(got) != len(full) {
			t.Fatalf("k=%d n=%d: ApplyFull length %d, want %d", c.k, c.n, len(got), len(full))
		}
		if e := convErr(got, full); e > 1e-10 {
			t.Errorf("k=%d n=%d: ApplyFull relative error %.3g (method %d)", c.k, c.n, e, cv.choose(c.n, len(full)))
		}
		cut := cv.Apply(nil, x)
		if len(cut) != c.n {
			t.Fatalf("k=%d n=%d: Apply length %d, want %d", c.k, c.n, len(cut), c.n)
		}
		if e := convErr(cut, full[:c.n]); e > 1e-10 {
			t.Errorf("k=%d n=%d: Apply relative error %.3g (method %d)", c.k, c.n, e, cv.choose(c.n, c.n))
		}
	}
}

// TestConvolverMethods forces every method (direct, overlap-save at several
// block lengths, one FFT covering everything) on the same problems.
func TestConvolverMethods(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 2))
	for _, c := range []struct{ k, n int }{{1, 50}, {5, 300}, {100, 1000}, {333, 200}} {
		h := randReal(rng, c.k)
		x := randReal(rng, c.n)
		cv := NewConvolver(h)
		outLen := c.n + c.k - 1
		want := naiveConv(h, x, outLen)
		got := make([]float64, outLen)
		cv.direct(got, x)
		if e := convErr(got, want); e > 1e-12 {
			t.Errorf("k=%d n=%d direct: relative error %.3g", c.k, c.n, e)
		}
		for l := max(2, NextPow2(c.k)); l <= NextPow2(outLen); l *= 2 {
			clear(got)
			cv.overlapSave(got, x, cv.size(l))
			if e := convErr(got, want); e > 1e-10 {
				t.Errorf("k=%d n=%d overlap-save l=%d: relative error %.3g", c.k, c.n, l, e)
			}
		}
	}
}

func TestConvolverEmpty(t *testing.T) {
	cv := NewConvolver([]float64{1, 2, 3})
	if got := cv.Apply(nil, nil); len(got) != 0 {
		t.Errorf("Apply(empty) has %d samples", len(got))
	}
	if got := cv.ApplyFull(nil, nil); len(got) != 0 {
		t.Errorf("ApplyFull(empty) has %d samples", len(got))
	}
}

// TestConvolverImpulse: convolving with a unit impulse delayed by d shifts
// the input by d samples (definition of convolution).
func TestConvolverImpulse(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 3))
	x := randReal(rng, 3000)
	for _, d := range []int{0, 1, 99, 2047} {
		h := make([]float64, d+1)
		h[d] = 1
		y := NewConvolver(h).Apply(nil, x)
		for i := range y {
			want := 0.0
			if i >= d {
				want = x[i-d]
			}
			if math.Abs(y[i]-want) > 1e-12 {
				t.Fatalf("delay %d: y[%d] = %g, want %g", d, i, y[i], want)
			}
		}
	}
}

// TestConvolverConcurrent runs one Convolver from several goroutines on
// inputs of sizes that need different FFT lengths, and checks that every
// result is bit-identical to a serial run (run with -race).
func TestConvolverConcurrent(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 4))
	h := randReal(rng, 700)
	cv := NewConvolver(h)
	inputs := [][]float64{randReal(rng, 300), randReal(rng, 5000), randReal(rng, 40000), randReal(rng, 1)}
	serial := make([][]float64, len(inputs))
	ref := NewConvolver(h)
	for i, x := range inputs {
		serial[i] = ref.ApplyFull(nil, x)
	}
	var wg sync.WaitGroup
	errs := make(chan string, 64)
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			var dst []float64
			for r := 0; r < 3; r++ {
				i := (g + r) % len(inputs)
				dst = cv.ApplyFull(dst, inputs[i])
				for j := range dst {
					if dst[j] != serial[i][j] {
						errs <- "concurrent result differs from serial"
						return
					}
				}
			}
		}(g)
	}
	wg.Wait()
	close(errs)
	for e := range errs {
		t.Fatal(e)
	}
}

func TestConvolverDeterministic(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	h := randReal(rng, 12800)
	x := randReal(rng, 50000)
	a := NewConvolver(h).Apply(nil, x)
	b := NewConvolver(h).Apply(nil, x)
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			t.Fatalf("sample %d differs between runs: %v vs %v", i, a[i], b[i])
		}
	}
}

// TestConvolverKernelCopied: later edits of the caller's kernel slice must
// not change the Convolver.
func TestConvolverKernelCopied(t *testing.T) {
	h := []float64{1, 0.5}
	cv := NewConvolver(h)
	h[0] = 100
	y := cv.Apply(nil, []float64{1, 0, 0})
	if y[0] != 1 || y[1] != 0.5 {
		t.Errorf("got %v, want [1 0.5 0]", y)
	}
}

// TestConvolverChoice pins the extremes of the cost model: a 1-tap kernel
// is summed directly, and a 12 800-tap reverb on 10 s of audio uses
// overlap-save with blocks much shorter than one FFT over everything.
func TestConvolverChoice(t *testing.T) {
	if l := NewConvolver([]float64{0.5}).choose(100000, 100000); l != 0 {
		t.Errorf("1 tap: FFT length %d, want direct (0)", l)
	}
	cv := NewConvolver(make([]float64, 12800))
	l := cv.choose(155340, 155340)
	if l == 0 || l < 2*12800 || l >= NextPow2(155340+12800-1) {
		t.Errorf("12 800 taps, 155 340 samples: FFT length %d, want overlap-save blocks", l)
	}
}
