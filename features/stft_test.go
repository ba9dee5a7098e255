package features

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestPeriodicHannFigures(t *testing.T) {
	for _, n := range []int{16, 256, 1024, 4096} {
		w := PeriodicHann(nil, n)
		var s1, s2 float64
		for _, v := range w {
			s1 += v
			s2 += v * v
		}
		// Harris 1978, Table 1: Hann ENBW 1.50 bins, coherent gain 0.50;
		// ENBW = N·Σw²/(Σw)² (Heinzel, Rüdiger & Schilling 2002).
		if enbw := float64(n) * s2 / (s1 * s1); math.Abs(enbw-1.5) > 1e-12 {
			t.Errorf("n=%d: ENBW %v bins, want 1.5", n, enbw)
		}
		if cg := s1 / float64(n); math.Abs(cg-0.5) > 1e-12 {
			t.Errorf("n=%d: coherent gain %v, want 0.5", n, cg)
		}
		if w[0] != 0 || math.Abs(w[n/2]-1) > 1e-15 {
			t.Errorf("n=%d: periodic Hann w[0]=%v w[n/2]=%v, want 0 and 1", n, w[0], w[n/2])
		}
	}
}

func TestHannOverlapAdd(t *testing.T) {
	// Periodic Hann is constant overlap-add: Σ_m w[i − mH] = 1 for H = N/2
	// and 2 for H = N/4 (follows from the cosine sum; common practice).
	const n = 512
	w := PeriodicHann(nil, n)
	for _, tc := range []struct{ hop, want int }{{n / 2, 1}, {n / 4, 2}} {
		for i := 0; i < n; i++ {
			var sum float64
			for j := i % tc.hop; j < n; j += tc.hop {
				sum += w[j]
			}
			if math.Abs(sum-float64(tc.want)) > 1e-12 {
				t.Fatalf("hop %d: overlap-add at %d is %v, want %d", tc.hop, i, sum, tc.want)
			}
		}
	}
}

func TestSTFTParseval(t *testing.T) {
	// Parseval for the DFT: Σ_k |X[k]|² = N·Σ_n |x[n]|² over all N bins; the
	// one-sided spectrum counts bins 1..N/2−1 twice.
	rng := rand.New(rand.NewPCG(7, 7))
	for _, tc := range []struct {
		n, hop int
		center bool
		pad    string
	}{{1024, 512, false, ""}, {256, 64, true, PadReflect}, {64, 32, true, PadZero}} {
		s, err := NewSTFT(Config{NFFT: tc.n, Hop: tc.hop, Center: tc.center, Pad: tc.pad})
		if err != nil {
			t.Fatal(err)
		}
		x := make([]float64, 5*tc.n+17)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		spec, frames := s.Compute(nil, x)
		if frames != s.Frames(len(x)) || len(spec) != frames*s.Bins() {
			t.Fatalf("frames %d, len %d", frames, len(spec))
		}
		for i := range frames {
			row := spec[i*s.Bins() : (i+1)*s.Bins()]
			var e float64
			for k, v := range row {
				if k == 0 || k == tc.n/2 {
					e += v
				} else {
					e += 2 * v
				}
			}
			s.window(x, i)
			var td float64
			for _, v := range s.frame {
				td += v * v
			}
			if math.Abs(e-float64(tc.n)*td) > 1e-9*e {
				t.Fatalf("n=%d frame %d: Σ|X|² = %v, N·Σ(wx)² = %v", tc.n, i, e, float64(tc.n)*td)
			}
		}
	}
}

func TestSTFTFramesAndPadding(t *testing.T) {
	noPad, _ := NewSTFT(Config{})
	centred, _ := NewSTFT(Config{Center: true})
	tests := []struct {
		s    *STFT
		n    int
		want int
	}{
		{noPad, 16000, 30}, {noPad, 1023, 0}, {noPad, 1024, 1}, {noPad, 1536, 2},
		{centred, 16000, 32}, {centred, 0, 0}, {centred, 1, 1},
	}
	for _, tc := range tests {
		if got := tc.s.Frames(tc.n); got != tc.want {
			t.Errorf("center=%v n=%d: %d frames, want %d", tc.s.center, tc.n, got, tc.want)
		}
	}
	// numpy.pad documentation example: np.pad([1, 2, 3, 4, 5], (2, 3),
	// 'reflect') = [3, 2, 1, 2, 3, 4, 5, 4, 3, 2] (from memory).
	x := []float64{1, 2, 3, 4, 5}
	want := []float64{3, 2, 1, 2, 3, 4, 5, 4, 3, 2}
	for i, w := range want {
		if got := centred.sample(x, i-2); got != w {
			t.Errorf("reflect index %d: %v, want %v", i-2, got, w)
		}
	}
	zero, _ := NewSTFT(Config{Center: true, Pad: PadZero})
	if zero.sample(x, -1) != 0 || zero.sample(x, 5) != 0 || zero.sample(x, 4) != 5 {
		t.Error("zero padding")
	}
	// Long reflections fold back and forth with period 2(L−1).
	if centred.sample(x, 9) != 2 || centred.sample(x, -9) != 2 {
		t.Errorf("folded reflect: %v %v", centred.sample(x, 9), centred.sample(x, -9))
	}
}

func TestSTFTMagnitudeAndTone(t *testing.T) {
	const n, k0, amp = 256, 20, 0.8
	x := make([]float64, 4*n)
	for i := range x {
		x[i] = amp * math.Cos(2*math.Pi*k0*float64(i)/n)
	}
	s, _ := NewSTFT(Config{NFFT: n, Magnitude: true})
	spec, frames := s.Compute(nil, x)
	for i := range frames {
		row := spec[i*s.Bins() : (i+1)*s.Bins()]
		// An on-bin cosine of amplitude A through a window gives
		// |X[k0]| = A·Σw/2 = A·N/4 for Hann (Harris 1978, coherent gain 0.5);
		// the neighbours are half that (Hann's three-term kernel).
		if math.Abs(row[k0]-amp*n/4) > 1e-9 || math.Abs(row[k0+1]-amp*n/8) > 1e-9 || row[k0+3] > 1e-9 {
			t.Fatalf("frame %d: |X| around k0 = %v %v %v", i, row[k0], row[k0+1], row[k0+3])
		}
	}
}
