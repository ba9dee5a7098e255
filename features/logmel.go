package features

import (
	"math"
)

// LogMel is a log-mel extractor: STFT, mel filterbank and log, built once
// and reused. It holds scratch space and is not safe for concurrent use;
// make one per worker.
type LogMel struct {
	cfg  Config
	fs   float64
	stft *STFT
	fb   *Filterbank
	spec []float64
	mel  []float64
	// ref scales the mel value by the power of the bin a full-scale
	// bin-centred sine falls on (LogDB, LogNone; see the package doc for
	// what a band then reads); 1 in LogNumpy mode.
	ref float64
}

// NewLogMel builds an extractor for cfg at sample rate fs Hz.
func NewLogMel(cfg Config, fs float64) (*LogMel, error) {
	c, err := cfg.Resolve(fs)
	if err != nil {
		return nil, err
	}
	st, err := NewSTFT(c)
	if err != nil {
		return nil, err
	}
	fb, err := NewFilterbank(c, fs)
	if err != nil {
		return nil, err
	}
	var sum float64
	for _, w := range st.Window() {
		sum += w
	}
	ref := 1.0
	if c.Log != LogNumpy {
		// A sine of amplitude A on bin k has |X[k]| = A·Σw/2.
		ref = 2 / sum
		if !c.Magnitude {
			ref *= ref
		}
	}
	return &LogMel{
		cfg: c, fs: fs, stft: st, fb: fb,
		spec: make([]float64, st.Bins()),
		mel:  make([]float64, c.Bands),
		ref:  ref,
	}, nil
}

// Config returns the resolved configuration (defaults filled in).
func (l *LogMel) Config() Config { return l.cfg }

// SampleRate returns the sample rate in Hz.
func (l *LogMel) SampleRate() float64 { return l.fs }

// Bands returns the number of mel bands.
func (l *LogMel) Bands() int { return l.cfg.Bands }

// Frames returns the number of frames Compute gives for n samples.
func (l *LogMel) Frames(n int) int { return l.stft.Frames(n) }

// Filterbank returns the mel filterbank (shared; do not modify).
func (l *LogMel) Filterbank() *Filterbank { return l.fb }

// FrameSeconds returns the hop in seconds.
func (l *LogMel) FrameSeconds() float64 { return float64(l.cfg.Hop) / l.fs }

// Compute writes the log-mel features of x into dst (nil or short
// allocates), row-major frames × bands, and returns them with the frame
// count. After the first call with a given size it does not allocate.
func (l *LogMel) Compute(dst []float32, x []float64) (out []float32, frames int) {
	out, frames, _ = l.ComputePower(dst, x, nil)
	return out, frames
}

// ComputePower is Compute that also sets power[k], k = 0..NFFT/2, to the sum
// over the frames of the frames' power spectra, the same sums a Summarizer
// of this configuration forms (see Summarizer.SummarizePower), so that clip
// summaries need no second STFT. It does so, and returns ok, only when the
// extractor works on power (not Magnitude) and power holds NFFT/2+1 values;
// otherwise power is left alone. A nil power is Compute.
func (l *LogMel) ComputePower(dst []float32, x []float64, power []float64) (out []float32, frames int, ok bool) {
	ok = power != nil && !l.cfg.Magnitude && len(power) == l.stft.Bins()
	if ok {
		clear(power)
	}
	frames = l.stft.Frames(len(x))
	nb := l.cfg.Bands
	if cap(dst) < frames*nb {
		dst = make([]float32, frames*nb)
	}
	dst = dst[:frames*nb]
	for i := range frames {
		l.stft.Frame(l.spec, x, i)
		if ok {
			for k, v := range l.spec {
				power[k] += v
			}
		}
		l.fb.Apply(l.mel, l.spec)
		l.logRow(dst[i*nb:(i+1)*nb], l.mel)
	}
	return dst, frames, ok
}

// Bins returns the number of power-spectrum bins per frame, NFFT/2+1.
func (l *LogMel) Bins() int { return l.stft.Bins() }

// logRow applies the configured log to one row of mel values.
func (l *LogMel) logRow(dst []float32, mel []float64) {
	dst = dst[:len(mel)]
	switch l.cfg.Log {
	case LogNumpy:
		log10RowEps(dst, mel, NumpyEpsilon)
	case LogNone:
		for b, v := range mel {
			dst[b] = float32(v * l.ref)
		}
	default:
		k, floor := 10.0, l.cfg.Floor
		if l.cfg.Magnitude {
			k, floor = 20, math.Sqrt(floor)
		}
		for b, v := range mel {
			v *= l.ref
			if v < floor { // NaN passes through to the output
				v = floor
			}
			dst[b] = float32(k * log10Fast(v))
		}
	}
}
