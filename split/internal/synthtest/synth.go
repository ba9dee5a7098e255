// Package synthtest synthesises recordings of an invented rotating machine
// and the transforms a leaked copy may have gone through (gain, shift,
// noise, speed), for the tests and benchmarks of split and split/neardup.
// Nothing outside tests imports it.
package synthtest

import (
	"math"
	"math/rand/v2"
)

// Machine is a synthetic rotating machine used only by the tests: the
// harmonics of a shaft rate, a vane-pass line, noise through structural
// resonances and one impact per revolution exciting another resonance. All
// recordings of one model share its lines and resonances; each recording has
// its own noise, phases and a small speed offset.
type Machine struct {
	fs       float64
	shaftHz  float64
	harm     []float64 // amplitude of shaft harmonic k+1
	res      []resonator
	impactHz float64 // resonance the impacts ring
	impact   float64
	floor    float64
}

type resonator struct{ hz, r, gain float64 }

// NewMachine draws a machine model for sample rate fs from rng.
func NewMachine(rng *rand.Rand, fs float64) *Machine {
	m := &Machine{fs: fs, shaftHz: 20 + 10*rng.Float64(), impactHz: 2000 + 1500*rng.Float64()}
	for k := 1; k <= 40; k++ {
		a := 0.08 / float64(k) * (0.5 + rng.Float64())
		if k == 7 || k == 14 { // vane pass and its second harmonic
			a = 0.06
		}
		m.harm = append(m.harm, a)
	}
	for range 3 {
		m.res = append(m.res, resonator{hz: 500 + 5000*rng.Float64(), r: 0.99 + 0.008*rng.Float64(), gain: 0.02 + 0.02*rng.Float64()})
	}
	m.impact = 0.3
	m.floor = 0.02
	return m
}

// Record synthesises one recording of seconds length. Component levels (RMS):
// lines 0.1, resonant noise 0.08, impacts 0.04, broadband floor 0.02, so the
// steady lines carry about half the power, as in many rotating machines
// (common practice).
func (m *Machine) Record(rng *rand.Rand, seconds float64) []float64 {
	n := int(seconds * m.fs)
	x := make([]float64, n)
	f0 := m.shaftHz * (1 + 0.004*(rng.Float64()-0.5))
	lines := make([]float64, n)
	for k, a := range m.harm {
		ph := 2 * math.Pi * rng.Float64()
		w := 2 * math.Pi * f0 * float64(k+1) / m.fs
		if w >= math.Pi {
			break
		}
		// Recursive rotation: z ← z·e^{iw}, renormalised now and then.
		c, s := math.Cos(w), math.Sin(w)
		zr, zi := math.Cos(ph), math.Sin(ph)
		for i := range lines {
			lines[i] += a * zi
			zr, zi = zr*c-zi*s, zr*s+zi*c
			if i&1023 == 0 {
				g := 1 / math.Hypot(zr, zi)
				zr, zi = zr*g, zi*g
			}
		}
	}
	addScaled(x, lines, 0.1)
	res := make([]float64, n)
	for _, r := range m.res {
		addResonantNoise(res, rng, r, m.fs)
	}
	addScaled(x, res, 0.08)
	// Impacts: one per revolution, 1 % timing jitter, ringing a resonance.
	imp := make([]float64, n)
	period := m.fs / f0
	for t := period * rng.Float64(); t < float64(n); t += period * (1 + 0.01*rng.NormFloat64()) {
		imp[int(t)] += 0.7 + 0.6*rng.Float64()
	}
	rung := make([]float64, n)
	ring(rung, imp, m.impactHz, 0.995, m.fs)
	addScaled(x, rung, 0.04)
	for i := range x {
		x[i] += m.floor * rng.NormFloat64()
	}
	return x
}

// addScaled adds y to x scaled to RMS level.
func addScaled(x, y []float64, level float64) {
	g := level / RMS(y)
	for i, v := range y {
		x[i] += g * v
	}
}

func addResonantNoise(x []float64, rng *rand.Rand, r resonator, fs float64) {
	e := make([]float64, len(x))
	for i := range e {
		e[i] = r.gain * rng.NormFloat64()
	}
	ring(x, e, r.hz, r.r, fs)
}

// ring adds in filtered by a two-pole resonator at hz with pole radius r.
func ring(x, in []float64, hz, r, fs float64) {
	a1 := -2 * r * math.Cos(2*math.Pi*hz/fs)
	a2 := r * r
	g := 1 - r
	var y1, y2 float64
	for i, v := range in {
		y := g*v - a1*y1 - a2*y2
		x[i] += y
		y2, y1 = y1, y
	}
}

// RMS returns the root mean square of x.
func RMS(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v * v
	}
	return math.Sqrt(s / float64(len(x)))
}

// Gain returns x scaled by db decibels.
func Gain(x []float64, db float64) []float64 {
	g := math.Pow(10, db/20)
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = g * v
	}
	return y
}

// Shift delays (s > 0) or advances x by s samples, zero-filling.
func Shift(x []float64, s int) []float64 {
	y := make([]float64, len(x))
	for i := range y {
		if j := i - s; j >= 0 && j < len(x) {
			y[i] = x[j]
		}
	}
	return y
}

// Noise adds white Gaussian noise at snr dB relative to the mean square of x.
func Noise(x []float64, rng *rand.Rand, snr float64) []float64 {
	s := RMS(x) * math.Pow(10, -snr/20)
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = v + s*rng.NormFloat64()
	}
	return y
}

// Speed plays x at ratio r (r > 1 faster and higher) by linear
// interpolation: y[i] = x(i·r). Every line moves by r, duration by 1/r.
func Speed(x []float64, r float64) []float64 {
	n := int(float64(len(x)-1) / r)
	y := make([]float64, n)
	for i := range y {
		t := float64(i) * r
		j := int(t)
		f := t - float64(j)
		if j+1 < len(x) {
			y[i] = x[j]*(1-f) + x[j+1]*f
		} else {
			y[i] = x[j]
		}
	}
	return y
}
