package augment

import (
	"fmt"
	"math"

	"thrum/machine/dsp"
)

// Tempo changes the tempo by Factor without changing pitch (Factor > 1 is
// faster: output round(len(x)/Factor) samples) by WSOLA, waveform-similarity
// overlap-add (Verhelst & Roelands 1993): 40 ms Hann frames at a 20 ms
// synthesis hop, each taken from within ±10 ms of its nominal input
// position where it best continues the previous frame (largest
// cross-correlation with the previous frame's natural continuation over
// one hop).
//
// NON-PHYSICAL: a real machine that runs faster raises every line with
// its speed; Tempo changes the rate of events (impacts, modulation) while
// keeping the lines where they were, so shaft orders, bearing tones and
// event rates no longer agree. Use it only where that is wanted.
// dst may not alias x. Apply panics if Factor is not positive and finite.
type Tempo struct {
	Factor float64
}

// Pitch shifts every frequency by Cents (1200 per octave) without
// changing the duration: Tempo by 1/r, then Speed by r, r = 2^(Cents/1200),
// trimmed or zero-padded to len(x).
//
// NON-PHYSICAL: harmonics move but the rate of events (shaft rotation,
// impacts, modulation) does not, which no change of machine speed can
// produce. dst may not alias x.
type Pitch struct {
	Cents float64
}

// Nonphysical reports whether t breaks machine physics (Tempo and Pitch),
// which a recipe must allow explicitly.
func Nonphysical(t Transform) bool {
	switch t.(type) {
	case Tempo, *Tempo, Pitch, *Pitch:
		return true
	}
	return false
}

// Apply implements Transform.
func (p Pitch) Apply(dst, x []float64, fs float64) []float64 {
	r := math.Pow(2, p.Cents/1200)
	st := Tempo{Factor: 1 / r}.Apply(nil, x, fs)
	y := NewResampler(r).Apply(dst, st)
	n := len(x)
	if len(y) >= n {
		return y[:n]
	}
	m := len(y)
	y = append(y, make([]float64, n-m)...)
	return y
}

// Apply implements Transform.
func (t Tempo) Apply(dst, x []float64, fs float64) []float64 {
	return t.stretch(dst, x, fs, int(math.Round(float64(len(x))/t.Factor)))
}

// tempoFrames are WSOLA's synthesis hop, frame length and search
// tolerance in samples at fs Hz. The hop is a multiple of 8, the block
// size of the correlation kernel.
func tempoFrames(fs float64) (hop, frame, tol int) {
	hop = max(int(math.Round(0.02*fs/8))*8, 8)
	return hop, 2 * hop, hop / 2
}

// tempoReach is how far past ⌈out·Factor⌉ input samples stretch may read
// for out outputs: the last frame starts up to the search tolerance after
// its nominal position and is a frame long.
func tempoReach(fs float64) int64 {
	_, frame, tol := tempoFrames(fs)
	return int64(frame + tol)
}

// stretch writes exactly out samples of x at tempo Factor: output sample
// m stands for input instant m·Factor. With len(x) ≥ ⌈out·Factor⌉ +
// tempoReach every frame is searched and read inside x, as in the middle
// of a long input (a shorter x clamps the last frames' search at its end).
// It panics if Factor is not positive and finite.
func (t Tempo) stretch(dst, x []float64, fs float64, out int) []float64 {
	a := t.Factor
	if !(a > 0) || math.IsInf(a, 0) {
		panic(fmt.Sprintf("augment: tempo factor %v is not positive and finite", a))
	}
	n := len(x)
	dst = grow(dst, out)
	clear(dst)
	hop, frame, tol := tempoFrames(fs)
	if n == 0 || out == 0 {
		return dst
	}
	// Periodic Hann: frames at a half-frame hop sum to exactly 1.
	win := make([]float64, frame)
	for i := range win {
		win[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(frame))
	}
	at := func(i int) float64 {
		if i < 0 || i >= n {
			return 0
		}
		return x[i]
	}
	prev := 0 // input position of the previous frame
	for k := 0; k*hop < out; k++ {
		pos := 0
		if k > 0 {
			nominal := int(math.Round(float64(k*hop) * a))
			lo, hi := nominal-tol, nominal+tol
			if n >= frame {
				lo, hi = max(lo, 0), min(hi, n-frame)
			}
			// Natural continuation of the previous frame, compared over
			// the overlap (the first hop samples).
			nat := prev + hop
			best, bestC := nominal, math.Inf(-1)
			if lo > hi {
				best = min(max(nominal, 0), max(n-frame, 0))
			}
			var out [4]float64
			for c := lo; c <= hi; c += 4 {
				if c >= 0 && nat >= 0 && c+3+hop <= n && nat+hop <= n {
					// Four candidate offsets against the continuation at once.
					dsp.Dot4s(&out, &x[nat], &x[c], 1, hop)
				} else {
					for k := range out {
						var s float64
						for i := 0; i < hop; i++ {
							s += at(c+k+i) * at(nat+i)
						}
						out[k] = s
					}
				}
				for k := 0; k < 4 && c+k <= hi; k++ {
					if out[k] > bestC {
						best, bestC = c+k, out[k]
					}
				}
			}
			pos = best
		}
		base := k * hop
		for i := 0; i < frame && base+i < out; i++ {
			w := win[i]
			if k == 0 && i < hop {
				w = 1 // nothing overlaps the first half-frame
			}
			dst[base+i] += w * at(pos+i)
		}
		prev = pos
	}
	return dst
}
