package features

import (
	"fmt"
	"math"
)

// Mel scales (Config.Scale).
const (
	ScaleHTK    = "htk"    // 2595·log10(1 + f/700), O'Shaughnessy 1987
	ScaleSlaney = "slaney" // linear below 1 kHz, logarithmic above, Slaney 1998
)

// Filter normalisations (Config.Norm).
const (
	NormPeak = "peak" // every triangle peaks at 1 (HTK style)
	NormArea = "area" // every triangle scaled by 2/(f_hi − f_lo) (Slaney style)
)

// Centre padding modes (Config.Pad).
const (
	PadReflect = "reflect" // x[−i] = x[i], x[L−1+i] = x[L−1−i] (numpy "reflect")
	PadZero    = "zero"
)

// Log modes (Config.Log).
const (
	LogDB    = "db"    // 10·log10(max(P/Pref, Floor)), see the package doc
	LogNumpy = "log10" // log10(P + 1e-10) on the raw unnormalised power, no ×10
	LogNone  = "none"  // linear mel power, same normalisation as LogDB
)

// Default values taken by zero fields of a Config.
const (
	DefaultNFFT  = 1024 // 64 ms at 16 kHz: resolves shaft orders of ~16 Hz bins
	DefaultHop   = 512  // half overlap: periodic Hann sums to 1
	DefaultBands = 128
	DefaultFloor = 1e-10 // −100 dB re full scale
)

// NumpyEpsilon is the constant added before log10 in LogNumpy mode.
const NumpyEpsilon = 1e-10

// Config describes an STFT and a log-mel front end. The zero value is usable
// and means: n_fft 1024, hop 512, 128 HTK bands with unit-peak triangles from
// 0 Hz to fs/2, no centre padding, power spectrum, output in dB with a floor
// of −100 dB. These suit machine sound sampled at 16 kHz.
type Config struct {
	// NFFT is the frame and FFT length in samples, a power of two
	// (default 1024).
	NFFT int `json:"n_fft"`
	// Hop is the frame advance in samples (default NFFT/2).
	Hop int `json:"hop"`
	// Bands is the number of mel bands (default 128).
	Bands int `json:"bands"`
	// Scale is ScaleHTK (default) or ScaleSlaney.
	Scale string `json:"scale"`
	// Norm is NormPeak (default) or NormArea.
	Norm string `json:"norm"`
	// FMin and FMax bound the filterbank in Hz; FMax 0 means fs/2.
	FMin float64 `json:"fmin"`
	FMax float64 `json:"fmax"`
	// Center pads the signal by NFFT/2 at both ends so that frame i is
	// centred on sample i·Hop; the default is no padding (frame i starts at
	// sample i·Hop).
	Center bool `json:"center"`
	// Pad is the centre padding, PadReflect (default) or PadZero.
	Pad string `json:"pad,omitempty"`
	// Magnitude selects |X| instead of the power |X|² (default power). It is
	// named so that the zero value is the usual choice for log-mel.
	Magnitude bool `json:"magnitude,omitempty"`
	// Log is LogDB (default), LogNumpy or LogNone.
	Log string `json:"log"`
	// Floor is the lower clamp of the normalised mel power in LogDB mode
	// (default 1e-10, −100 dB).
	Floor float64 `json:"floor,omitempty"`
}

// Resolve returns c with every zero field replaced by its default and checks
// it against the sample rate fs (Hz).
func (c Config) Resolve(fs float64) (Config, error) {
	c, err := c.resolveSTFT()
	if err != nil {
		return c, err
	}
	if c.Bands == 0 {
		c.Bands = DefaultBands
	}
	if c.Scale == "" {
		c.Scale = ScaleHTK
	}
	if c.Norm == "" {
		c.Norm = NormPeak
	}
	if c.Log == "" {
		c.Log = LogDB
	}
	if c.Floor == 0 {
		c.Floor = DefaultFloor
	}
	if !(fs > 0) || math.IsInf(fs, 0) {
		return c, fmt.Errorf("features: sample rate %v Hz must be positive and finite", fs)
	}
	if c.FMax == 0 {
		c.FMax = fs / 2
	}
	switch {
	case c.Bands < 1:
		return c, fmt.Errorf("features: bands %d must be ≥ 1", c.Bands)
	case c.Scale != ScaleHTK && c.Scale != ScaleSlaney:
		return c, fmt.Errorf("features: mel scale %q: want %q or %q", c.Scale, ScaleHTK, ScaleSlaney)
	case c.Norm != NormPeak && c.Norm != NormArea:
		return c, fmt.Errorf("features: filter norm %q: want %q or %q", c.Norm, NormPeak, NormArea)
	case c.Log != LogDB && c.Log != LogNumpy && c.Log != LogNone:
		return c, fmt.Errorf("features: log mode %q: want %q, %q or %q", c.Log, LogDB, LogNumpy, LogNone)
	case !(c.Floor > 0) || math.IsInf(c.Floor, 0):
		return c, fmt.Errorf("features: floor %v must be positive", c.Floor)
	case !(c.FMin >= 0) || !(c.FMax > c.FMin) || c.FMax > fs/2:
		return c, fmt.Errorf("features: band limits %v..%v Hz must satisfy 0 ≤ fmin < fmax ≤ fs/2 = %v", c.FMin, c.FMax, fs/2)
	}
	return c, nil
}

// resolveSTFT fills and checks the fields the STFT uses.
func (c Config) resolveSTFT() (Config, error) {
	if c.NFFT == 0 {
		c.NFFT = DefaultNFFT
	}
	if c.Hop == 0 {
		c.Hop = c.NFFT / 2
	}
	if c.Pad == "" {
		c.Pad = PadReflect
	}
	switch {
	case c.NFFT < 4 || c.NFFT&(c.NFFT-1) != 0:
		return c, fmt.Errorf("features: n_fft %d must be a power of two ≥ 4", c.NFFT)
	case c.Hop < 1:
		return c, fmt.Errorf("features: hop %d must be ≥ 1", c.Hop)
	case c.Pad != PadReflect && c.Pad != PadZero:
		return c, fmt.Errorf("features: pad %q: want %q or %q", c.Pad, PadReflect, PadZero)
	}
	return c, nil
}
