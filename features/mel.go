package features

import (
	"fmt"
	"math"
)

// HTKMel converts f Hz to mel on the HTK scale, m = 2595·log10(1 + f/700)
// (O'Shaughnessy 1987).
func HTKMel(f float64) float64 { return 2595 * math.Log10(1+f/700) }

// HTKHz is the inverse of HTKMel, f = 700·(10^(m/2595) − 1).
func HTKHz(m float64) float64 { return 700 * (math.Pow(10, m/2595) - 1) }

// Slaney scale constants (Slaney 1998, Auditory Toolbox): 200/3 Hz per mel
// below 1 kHz, a constant ratio of 6.4^(1/27) per mel above it.
const (
	slaneyLinHz   = 200.0 / 3
	slaneyBreakHz = 1000.0
	slaneyBreakM  = slaneyBreakHz / slaneyLinHz // 15
)

var slaneyLogStep = math.Log(6.4) / 27

// SlaneyMel converts f Hz to mel on the Slaney scale: f/(200/3) below 1 kHz,
// 15 + ln(f/1000)/ln(6.4^(1/27)) above.
func SlaneyMel(f float64) float64 {
	if f < slaneyBreakHz {
		return f / slaneyLinHz
	}
	return slaneyBreakM + math.Log(f/slaneyBreakHz)/slaneyLogStep
}

// SlaneyHz is the inverse of SlaneyMel.
func SlaneyHz(m float64) float64 {
	if m < slaneyBreakM {
		return m * slaneyLinHz
	}
	return slaneyBreakHz * math.Exp((m-slaneyBreakM)*slaneyLogStep)
}

// MelFuncs returns the forward and inverse mel conversions of a scale
// (ScaleHTK or ScaleSlaney; "" means ScaleHTK).
func MelFuncs(scale string) (toMel, toHz func(float64) float64, err error) {
	switch scale {
	case ScaleHTK, "":
		return HTKMel, HTKHz, nil
	case ScaleSlaney:
		return SlaneyMel, SlaneyHz, nil
	}
	return nil, nil, fmt.Errorf("features: mel scale %q: want %q or %q", scale, ScaleHTK, ScaleSlaney)
}

// Filterbank is a bank of triangular mel filters over the NFFT/2+1 bins of
// a one-sided spectrum, stored sparsely: band b has weights for bins
// Start[b] ≤ k < Stop[b] only.
type Filterbank struct {
	Bands, Bins int
	// Edges are the Bands+2 band edges in Hz, equally spaced in mel; band b
	// rises from Edges[b] to a peak at Edges[b+1] and falls to Edges[b+2].
	Edges       []float64
	Start, Stop []int
	weights     [][]float64
	// padded holds every band's weights, each band zero-padded to a
	// multiple of four, one band after the other; tab holds, per band,
	// its start bin and number of four-weight chunks. The first nvec bands
	// (those whose padded span stays inside the spectrum, and nonempty)
	// run on the vector kernel when there is one.
	padded []float64
	tab    []int32
	nvec   int
}

// NewFilterbank builds the filterbank of cfg (NFFT, Bands, Scale, Norm,
// FMin, FMax; zero fields take their defaults) for sample rate fs Hz. The
// weight of bin k at f = k·fs/NFFT in band b is
// max(0, min((f − lo)/(mid − lo), (hi − f)/(hi − mid))), times 2/(hi − lo)
// with NormArea.
func NewFilterbank(cfg Config, fs float64) (*Filterbank, error) {
	c, err := cfg.Resolve(fs)
	if err != nil {
		return nil, err
	}
	toMel, toHz, _ := MelFuncs(c.Scale)
	bins := c.NFFT/2 + 1
	fb := &Filterbank{
		Bands: c.Bands, Bins: bins,
		Edges: make([]float64, c.Bands+2),
		Start: make([]int, c.Bands),
		Stop:  make([]int, c.Bands),
	}
	mlo, mhi := toMel(c.FMin), toMel(c.FMax)
	for i := range fb.Edges {
		fb.Edges[i] = toHz(mlo + (mhi-mlo)*float64(i)/float64(c.Bands+1))
	}
	// Pin the outer edges to the requested limits against round-off.
	fb.Edges[0], fb.Edges[c.Bands+1] = c.FMin, c.FMax
	binHz := fs / float64(c.NFFT)
	fb.weights = make([][]float64, c.Bands)
	for b := range c.Bands {
		lo, mid, hi := fb.Edges[b], fb.Edges[b+1], fb.Edges[b+2]
		scale := 1.0
		if c.Norm == NormArea {
			scale = 2 / (hi - lo)
		}
		start, stop := bins, 0
		var w []float64
		for k := range bins {
			f := float64(k) * binHz
			v := math.Min((f-lo)/(mid-lo), (hi-f)/(hi-mid))
			if !(v > 0) {
				continue
			}
			if k < start {
				start = k
			}
			// Triangles are convex, so the support is contiguous.
			w = append(w, v*scale)
			stop = k + 1
		}
		if stop == 0 {
			start = 0
		}
		fb.Start[b], fb.Stop[b], fb.weights[b] = start, stop, w
	}
	fb.tab = make([]int32, 2*c.Bands)
	fit := true
	for b, w := range fb.weights {
		chunks := (len(w) + 3) / 4
		fb.tab[2*b], fb.tab[2*b+1] = int32(fb.Start[b]), int32(chunks)
		fb.padded = append(fb.padded, w...)
		for range 4*chunks - len(w) {
			fb.padded = append(fb.padded, 0)
		}
		if fit = fit && fb.Start[b]+4*chunks <= bins; fit {
			fb.nvec = b + 1
		}
	}
	if len(fb.padded) == 0 {
		fb.nvec = 0
	}
	return fb, nil
}

// CentreHz returns the peak frequency of band b.
func (fb *Filterbank) CentreHz(b int) float64 { return fb.Edges[b+1] }

// Weights returns the weights of band b for bins Start[b]..Stop[b]−1
// (shared; do not modify).
func (fb *Filterbank) Weights(b int) []float64 { return fb.weights[b] }

// Dense returns the Bands × Bins weight matrix, row-major.
func (fb *Filterbank) Dense() []float64 {
	d := make([]float64, fb.Bands*fb.Bins)
	for b, w := range fb.weights {
		copy(d[b*fb.Bins+fb.Start[b]:], w)
	}
	return d
}

// Apply writes the band energies Σ_k W[b][k]·spec[k] into dst (nil
// allocates) and returns it. It panics if len(spec) ≠ Bins.
func (fb *Filterbank) Apply(dst, spec []float64) []float64 {
	if len(spec) != fb.Bins {
		panic(fmt.Sprintf("features: spectrum has %d bins, filterbank wants %d", len(spec), fb.Bins))
	}
	if cap(dst) < fb.Bands {
		dst = make([]float64, fb.Bands)
	}
	dst = dst[:fb.Bands]
	first := 0
	if fb.applyVec(dst, spec) {
		first = fb.nvec
	}
	fb.applyLanes(dst, spec, first)
	return dst
}

// applyLanes computes bands first … Bands−1: four accumulators, lane
// k mod 4 taking weight k, summed as (a0 + a1) + (a2 + a3). The vector
// kernel adds the same products in the same order (its zero padding adds
// +0 to a non-negative sum, which changes nothing for a power spectrum).
func (fb *Filterbank) applyLanes(dst, spec []float64, first int) {
	for b := first; b < len(fb.weights); b++ {
		w := fb.weights[b]
		seg := spec[fb.Start[b] : fb.Start[b]+len(w)]
		seg = seg[:len(w)]
		var a0, a1, a2, a3 float64
		k := 0
		for ; k+3 < len(w); k += 4 {
			a0 += w[k] * seg[k]
			a1 += w[k+1] * seg[k+1]
			a2 += w[k+2] * seg[k+2]
			a3 += w[k+3] * seg[k+3]
		}
		if k < len(w) {
			a0 += w[k] * seg[k]
		}
		if k+1 < len(w) {
			a1 += w[k+1] * seg[k+1]
		}
		if k+2 < len(w) {
			a2 += w[k+2] * seg[k+2]
		}
		dst[b] = (a0 + a1) + (a2 + a3)
	}
}
