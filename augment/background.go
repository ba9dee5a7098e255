package augment

import (
	"math"
	"math/rand/v2"
)

// Background mixes a plant background recording (at the clip's sample
// rate) under the clip at SNR dB, measured with Weighting over the clip.
// The background is read from sample Offset (taken modulo the loop period
// when beyond the source); when it runs out it loops, each new pass
// fading in over the previous pass's last CrossfadeSeconds with an
// equal-power (sine/cosine) crossfade, which keeps the level of
// uncorrelated material constant. The crossfade is at most half the
// source. A silent clip or background leaves the clip unchanged. dst may
// not alias x. Apply panics if Source is empty.
type Background struct {
	Source           []float64
	SNR              float64
	Weighting        Weighting
	Offset           int
	CrossfadeSeconds float64
}

// Loop writes len(dst) samples of the looped background starting at
// Offset into dst and returns it.
func (b Background) Loop(dst []float64, fs float64) []float64 {
	s := b.Source
	if len(s) == 0 {
		panic("augment: background has no source samples")
	}
	n := len(dst)
	off := b.Offset
	if off < 0 {
		off = 0
	}
	if off+n <= len(s) {
		copy(dst, s[off:off+n])
		return dst
	}
	fade := int(math.Round(b.CrossfadeSeconds * fs))
	fade = min(max(fade, 0), len(s)/2)
	period := len(s) - fade
	t := off
	for i := range dst {
		k, u := t/period, t%period
		if k > 0 && u < fade {
			th := 0.5 * math.Pi * (float64(u) + 0.5) / float64(fade)
			dst[i] = s[u]*math.Sin(th) + s[u+period]*math.Cos(th)
		} else {
			dst[i] = s[u]
		}
		t++
	}
	return dst
}

// Mix returns the clip with the background mixed in and the background's
// gain.
func (b Background) Mix(dst, x []float64, fs float64) ([]float64, float64, error) {
	dst = b.Loop(grow(dst, len(x)), fs)
	g, y, err := Mix(dst, x, dst, fs, b.SNR, b.Weighting)
	return y, g, err
}

// Apply implements Transform.
func (b Background) Apply(dst, x []float64, fs float64) []float64 {
	y, _, err := b.Mix(dst, x, fs)
	if err != nil {
		y = grow(y, len(x))
		copy(y, x)
	}
	return y
}

// SynthPlantNoise fills dst (its length sets the duration) with a
// synthetic plant floor for when no background recording is given, and
// returns it at an RMS of 0.1 (−20 dBFS):
//
//   - pink broadband noise plus a white floor 20 dB below it;
//   - mains hum at 50, 100 and 150 Hz (levels about −12, −12 and −21 dB
//     re the broadband RMS, each varied by up to ±3 dB, random phases, a
//     common mains deviation of up to ±0.1 Hz);
//   - a slow amplitude wander of the broadband part, ±1.5 dB at most, from
//     three sinusoids of 0.05–0.5 Hz.
//
// rng is its only source of randomness.
func SynthPlantNoise(dst []float64, fs float64, rng *rand.Rand) []float64 {
	n := len(dst)
	if n == 0 {
		return dst
	}
	if _, err := Coloured(dst, Pink, fs, rng); err != nil {
		panic(err.Error())
	}
	var wf [3]float64
	var wp [3]float64
	for k := range wf {
		wf[k] = 0.05 + 0.45*rng.Float64()
		wp[k] = 2 * math.Pi * rng.Float64()
	}
	mains := 50 + 0.2*(rng.Float64()-0.5)
	humDB := [3]float64{-12, -12, -21}
	var ha, hp [3]float64
	for k := range ha {
		ha[k] = math.Sqrt2 * math.Pow(10, (humDB[k]+6*(rng.Float64()-0.5))/20)
		hp[k] = 2 * math.Pi * rng.Float64()
	}
	const floor = 0.1 // white floor, −20 dB re the pink part
	wmax := math.Pow(10, 1.5/20) - 1
	// Six oscillators (three wander, three hum) run as rotating phasors,
	// re-seeded from the exact phase every block to stop rounding drift.
	var freq, phase0, amp [6]float64
	for k := 0; k < 3; k++ {
		freq[k], phase0[k], amp[k] = wf[k], wp[k], wmax/3
		freq[3+k], phase0[3+k], amp[3+k] = mains*float64(k+1), hp[k], ha[k]
	}
	var rc, rs, c, sn [6]float64
	for k := range freq {
		rs[k], rc[k] = math.Sincos(2 * math.Pi * freq[k] / fs)
	}
	const block = 256
	for b := 0; b < n; b += block {
		t := float64(b) / fs
		for k := range freq {
			sn[k], c[k] = math.Sincos(2*math.Pi*math.Mod(freq[k]*t, 1) + phase0[k])
		}
		for i := b; i < min(b+block, n); i++ {
			m := amp[0]*sn[0] + amp[1]*sn[1] + amp[2]*sn[2]
			h := amp[3]*sn[3] + amp[4]*sn[4] + amp[5]*sn[5]
			dst[i] = dst[i]*(1+m) + floor*rng.NormFloat64() + h
			for k := range c {
				c[k], sn[k] = c[k]*rc[k]-sn[k]*rs[k], sn[k]*rc[k]+c[k]*rs[k]
			}
		}
	}
	normalise(dst)
	for i := range dst {
		dst[i] *= 0.1
	}
	return dst
}
