package features

import (
	"fmt"
	"math"

	"thrum/machine/dsp"
)

// PeriodicHann writes the periodic Hann window of length n,
// w[i] = 0.5·(1 − cos(2πi/n)), into dst (nil allocates) and returns it.
// gonum's dsp/window.Hann is the symmetric form (divisor n−1), which does
// not overlap-add to a constant.
func PeriodicHann(dst []float64, n int) []float64 {
	if cap(dst) < n {
		dst = make([]float64, n)
	}
	dst = dst[:n]
	for i := range dst {
		dst[i] = 0.5 * (1 - math.Cos(2*math.Pi*float64(i)/float64(n)))
	}
	return dst
}

// STFT is a short-time Fourier transform plan: periodic Hann window,
// unnormalised DFT, one-sided output of NFFT/2+1 bins per frame. It holds
// scratch space and is not safe for concurrent use; make one per worker.
type STFT struct {
	n, hop    int
	center    bool
	reflect   bool
	magnitude bool
	win       []float64
	frame     []float64
	fft       *dsp.RealFFT
}

// NewSTFT builds a plan from the NFFT, Hop, Center, Pad and Magnitude fields
// of cfg (zero fields take their defaults).
func NewSTFT(cfg Config) (*STFT, error) {
	c, err := cfg.resolveSTFT()
	if err != nil {
		return nil, err
	}
	return &STFT{
		n:         c.NFFT,
		hop:       c.Hop,
		center:    c.Center,
		reflect:   c.Pad == PadReflect,
		magnitude: c.Magnitude,
		win:       PeriodicHann(nil, c.NFFT),
		frame:     make([]float64, c.NFFT),
		fft:       dsp.NewRealFFT(c.NFFT),
	}, nil
}

// Bins returns NFFT/2+1.
func (s *STFT) Bins() int { return s.n/2 + 1 }

// Window returns the analysis window (shared; do not modify).
func (s *STFT) Window() []float64 { return s.win }

// Frames returns the number of frames for a signal of n samples: without
// centre padding 1 + (n − NFFT)/Hop (0 when n < NFFT), with it 1 + n/Hop
// (0 when n = 0).
func (s *STFT) Frames(n int) int {
	if s.center {
		if n <= 0 {
			return 0
		}
		return 1 + n/s.hop
	}
	if n < s.n {
		return 0
	}
	return 1 + (n-s.n)/s.hop
}

// Compute writes the spectrogram of x into dst (nil or short allocates),
// row-major frames × Bins, and returns it with the frame count. Values are
// |X[k]|² (or |X[k]| with Config.Magnitude) of the unnormalised DFT of the
// windowed frame.
func (s *STFT) Compute(dst []float64, x []float64) (out []float64, frames int) {
	frames = s.Frames(len(x))
	bins := s.Bins()
	if cap(dst) < frames*bins {
		dst = make([]float64, frames*bins)
	}
	dst = dst[:frames*bins]
	for i := 0; i < frames; i++ {
		s.Frame(dst[i*bins:(i+1)*bins], x, i)
	}
	return dst, frames
}

// Frame writes the spectrum of frame i of x into dst (nil allocates) and
// returns it. It panics if i is outside [0, Frames(len(x))).
func (s *STFT) Frame(dst []float64, x []float64, i int) []float64 {
	if i < 0 || i >= s.Frames(len(x)) {
		panic(fmt.Sprintf("features: frame %d out of range [0, %d)", i, s.Frames(len(x))))
	}
	if cap(dst) < s.Bins() {
		dst = make([]float64, s.Bins())
	}
	dst = dst[:s.Bins()]
	if start := s.start(i); start >= 0 && start+s.n <= len(x) {
		s.fft.PowerSpectrumWindowed(dst, x[start:start+s.n], s.win)
	} else {
		s.window(x, i)
		s.fft.PowerSpectrum(dst, s.frame)
	}
	if s.magnitude {
		for k, v := range dst {
			dst[k] = math.Sqrt(v)
		}
	}
	return dst
}

// window fills s.frame with the windowed frame i of x.
func (s *STFT) window(x []float64, i int) {
	start := s.start(i)
	f, w := s.frame, s.win
	if start >= 0 && start+s.n <= len(x) {
		seg := x[start : start+s.n]
		seg, w = seg[:len(f)], w[:len(f)]
		for j := range f {
			f[j] = w[j] * seg[j]
		}
		return
	}
	for j := range f {
		f[j] = w[j] * s.sample(x, start+j)
	}
}

// sample returns x[idx] with the padding rule for indices outside x.
func (s *STFT) sample(x []float64, idx int) float64 {
	l := len(x)
	if idx >= 0 && idx < l {
		return x[idx]
	}
	if !s.reflect {
		return 0
	}
	if l == 1 {
		return x[0]
	}
	// Reflection without repeating the edge sample has period 2(l−1).
	p := 2 * (l - 1)
	j := idx % p
	if j < 0 {
		j += p
	}
	if j >= l {
		j = p - j
	}
	return x[j]
}

// start returns the index in x of the first sample of frame i.
func (s *STFT) start(i int) int {
	start := i * s.hop
	if s.center {
		start -= s.n / 2
	}
	return start
}
