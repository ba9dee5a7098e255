package demoplant

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"

	"thrum/augment/fault"
	"thrum/machine"
)

const (
	// block is the control period in samples: the shaft rate is updated
	// once per block and the phase integrated across it.
	block = 64
	// sourceRMS is the machine signal's RMS at 1 m at the machine's fastest
	// condition (−22 dB re full scale).
	sourceRMS = 0.08
	// speedLawDB is the level change per decade of speed (30·log10 of the
	// speed ratio).
	speedLawDB = 30
	// peakLimit is −1.5 dBFS: takes whose peak would exceed it are scaled.
	peakLimit = 0.8414 // 10^(−1.5/20)
	// faultDB is the outer-race impact train's RMS re the machine signal.
	faultDB = -10
	// faultSlip is how far real defect rates fall below the kinematic ones.
	faultSlip = 0.01
	// faultJitter is the relative standard deviation of impact intervals.
	faultJitter = 0.01
	// faultResonanceHz and faultDamping set the ringing of each impact.
	faultResonanceHz = 3400
	faultDamping     = 0.04
	// rubOrdersDB and rubImpactDB are the levels re the machine signal of
	// a blade rub's raised 1× order (the unbalance) and of its impact train
	// (one tip strike per revolution); rubResonanceHz and rubDamping set
	// the casing ring each strike excites, rubJitter the spread of strike
	// intervals.
	rubOrdersDB    = -12
	rubImpactDB    = -14
	rubResonanceHz = 2600
	rubDamping     = 0.03
	rubJitter      = 0.005
	// innerRaceDB is a bearing inner-race defect's level re the machine
	// signal; it rings innerRaceHz with innerRaceDamping.
	innerRaceDB      = -12
	innerRaceHz      = 3000
	innerRaceDamping = 0.05
	// earlyShare is the part of a room's reverberant energy the early
	// reflections carry; the late tail is left to the room step.
	earlyShare = 0.35
)

// tone is one tonal line locked to a shaft: order × (input shaft phase) +
// phase. For hum the "shaft" turns at 1 Hz and the order is in Hz.
type tone struct{ order, amp, phase float64 }

// character is how a kind of machine sounds: relative line amplitudes and
// broadband parts, all before the level is set.
type character struct {
	orders           int       // shaft orders 1×…orders×
	shaftAmp         float64   // amplitude of 1× of the input shaft
	passAmp          float64   // blade/vane-pass fundamental
	passHarm         []float64 // relative amplitudes of the pass harmonics
	meshAmp          float64   // first stage's mesh fundamental (later stages ×0.4 each)
	meshHarm         []float64
	side             float64 // sideband amplitude relative to its carrier
	resHz, resQ, res float64 // structural resonance: centre, Q, RMS
	bearing          float64 // RMS of bearing noise (band-pass around 4 kHz)
	flowHz, flow     float64 // flow noise: low-pass corner, RMS
}

func characterOf(kind string) character {
	switch kind {
	case "pump":
		return character{orders: 6, shaftAmp: 0.22, passAmp: 1, passHarm: []float64{1, 0.3, 0.12}, side: 0.12,
			meshAmp: 0.8, meshHarm: []float64{1, 0.4}, resHz: 780, resQ: 6, res: 0.35, bearing: 0.05, flowHz: 1200, flow: 0.25}
	case "fan", "blower":
		return character{orders: 5, shaftAmp: 0.25, passAmp: 1, passHarm: []float64{1, 0.35, 0.15, 0.06}, side: 0.1,
			meshAmp: 0.8, meshHarm: []float64{1, 0.4}, resHz: 420, resQ: 5, res: 0.25, bearing: 0.04, flowHz: 900, flow: 0.45}
	case "conveyor", "gearbox":
		return character{orders: 4, shaftAmp: 0.2, passAmp: 0.8, passHarm: []float64{1, 0.4}, side: 0.1,
			meshAmp: 1, meshHarm: []float64{1, 0.3, 0.1}, resHz: 1150, resQ: 8, res: 0.3, bearing: 0.06, flowHz: 300, flow: 0.12}
	}
	return character{orders: 5, shaftAmp: 0.4, passAmp: 0.8, passHarm: []float64{1, 0.4}, side: 0.1,
		meshAmp: 0.8, meshHarm: []float64{1, 0.4}, resHz: 900, resQ: 6, res: 0.3, bearing: 0.05, flowHz: 800, flow: 0.2}
}

// voice is one machine's fixed sound: its tonal lines as orders of the
// input shaft, and its broadband parts.
type voice struct {
	tones []tone
	character
}

type synth struct {
	p    *machine.Plant
	seed uint64
	rate float64
	// work buffers, reused from take to take to keep the garbage collector
	// out of the way
	bufs [3][]float64
}

// buffers returns the three work buffers with length n, zeroed.
func (s *synth) buffers(n int) (a, b, c []float64) {
	for i := range s.bufs {
		if cap(s.bufs[i]) < n {
			s.bufs[i] = make([]float64, n)
		}
		s.bufs[i] = s.bufs[i][:n]
		clear(s.bufs[i])
	}
	return s.bufs[0], s.bufs[1], s.bufs[2]
}

func newSynth(p *machine.Plant, seed uint64) *synth {
	return &synth{p: p, seed: seed, rate: float64(p.SampleRate)}
}

// stream is the random stream of one key: PCG seeded by (seed, FNV-1a of
// the key), so no file's draws depend on another's.
func (s *synth) stream(key string) *rand.Rand {
	h := fnv.New64a()
	h.Write([]byte(key))
	return rand.New(rand.NewPCG(s.seed, h.Sum64()))
}

// maxRPM is the machine's fastest condition speed; with top it is the top
// of that condition's band.
func maxRPM(m *machine.Machine, top bool) float64 {
	hi := 0.0
	for _, c := range m.Conditions {
		r := c.RPM
		if top {
			_, r = c.Band()
		}
		hi = math.Max(hi, r)
	}
	return hi
}

// voiceOf builds a machine's lines from its physics: shaft orders of every
// shaft, blade pass, gear mesh, with harmonics and sidebands. Lines that
// could pass 0.45 × the sample rate are left out.
func (s *synth) voiceOf(m *machine.Machine) voice {
	rng := s.stream("voice/" + m.ID)
	ch := characterOf(m.Kind)
	v := voice{character: ch}
	jit := func() float64 { return 0.8 + 0.4*rng.Float64() }
	ph := func() float64 { return 2 * math.Pi * rng.Float64() }
	add := func(order, amp float64) {
		v.tones = append(v.tones, tone{order: order, amp: amp, phase: ph()})
	}
	shafts := m.ShaftRates(1) // orders of every shaft re the input shaft
	for i, so := range shafts {
		a := ch.shaftAmp * math.Pow(0.5, float64(i))
		for k := 1; k <= ch.orders; k++ {
			add(float64(k)*so, a/float64(k)*jit())
		}
	}
	if m.Blades > 0 {
		bp := m.BladePass(1)
		for h, rel := range ch.passHarm {
			c := float64(h+1) * bp
			a := ch.passAmp * rel * jit()
			add(c, a)
			add(c-1, a*ch.side*jit())
			add(c+1, a*ch.side*jit())
		}
	}
	for i, g := range m.MeshHz(1) {
		stage := ch.meshAmp * math.Pow(0.4, float64(i))
		for h, rel := range ch.meshHarm {
			c := float64(h+1) * g
			a := stage * rel * jit()
			add(c, a)
			for _, sb := range []float64{shafts[i], shafts[i+1]} {
				add(c-sb, a*ch.side*jit())
				add(c+sb, a*ch.side*jit())
			}
		}
	}
	top := machine.ShaftHz(maxRPM(m, true))
	kept := v.tones[:0]
	for _, t := range v.tones {
		if t.order > 0 && t.order*top < 0.45*s.rate {
			kept = append(kept, t)
		}
	}
	v.tones = kept
	v.resHz = ch.resHz * (0.9 + 0.2*rng.Float64())
	return v
}

// speedTrack gives the shaft's angular rate in radians per sample for each
// block: f0·(1 + o + w(t)), |o| ≤ 0.15·band, |w| ≤ 0.2·band, so a take
// stays well inside its band and speed steps have room.
func (s *synth) speedTrack(rng *rand.Rand, n int, f0, band float64) []float64 {
	off := 0.15 * band * (2*rng.Float64() - 1)
	var a, nu, psi [3]float64
	sum := 0.0
	for j := range a {
		a[j] = 0.2 + rng.Float64()
		sum += a[j]
		nu[j] = 0.03 + 0.27*rng.Float64()
		psi[j] = 2 * math.Pi * rng.Float64()
	}
	om := make([]float64, (n+block-1)/block)
	for b := range om {
		t := (float64(b*block) + block/2) / s.rate
		w := 0.0
		for j := range a {
			w += a[j] / sum * math.Sin(2*math.Pi*nu[j]*t+psi[j])
		}
		om[b] = 2 * math.Pi * f0 * (1 + off + 0.2*band*w) / s.rate
	}
	return om
}

// addTones adds Σ amp·sin(order·φ + phase) to dst, where the shaft phase φ
// starts at phi0 and advances by omega[b] per sample in block b. Each line
// is set exactly from φ at every block start and then run as a two-term
// recursive oscillator, s[k+1] = 2·cos(ω)·s[k] − s[k−1], inside the block,
// so lines stay locked to the shaft; the recursion costs two operations a
// sample where a rotation costs six. Lines go four at a time so their
// recursions overlap.
func addTones(dst []float64, tones []tone, phi0 float64, omega []float64) {
	phis := make([]float64, len(omega))
	phi := phi0
	for b, om := range omega {
		phis[b] = phi
		phi += om * block
	}
	for j := 0; j < len(tones); j += 4 {
		var g [4]tone // unused slots have amp 0
		copy(g[:], tones[j:min(j+4, len(tones))])
		for b, om := range omega {
			lo := b * block
			hi := min(lo+block, len(dst))
			var s, p, c [4]float64 // s[k], s[k−1], 2·cos(ω)
			for q := range g {
				w := g[q].order * om
				th := g[q].order*phis[b] + g[q].phase
				st, ct := math.Sincos(th)
				sw, cw := math.Sincos(w)
				s[q] = g[q].amp * st
				p[q] = g[q].amp * (st*cw - ct*sw) // sin(th − w)
				c[q] = 2 * cw
			}
			s0, s1, s2, s3 := s[0], s[1], s[2], s[3]
			p0, p1, p2, p3 := p[0], p[1], p[2], p[3]
			c0, c1, c2, c3 := c[0], c[1], c[2], c[3]
			for k := lo; k < hi; k++ {
				dst[k] += (s0 + s1) + (s2 + s3)
				s0, p0 = c0*s0-p0, s0
				s1, p1 = c1*s1-p1, s1
				s2, p2 = c2*s2-p2, s2
				s3, p3 = c3*s3-p3, s3
			}
		}
	}
}

// biquad is an RBJ band-pass section normalised by a0 (b1 = 0, b2 = −b0).
type biquad struct{ b0, a1, a2 float64 }

// bandpass is the RBJ constant-0-dB-peak band-pass (Bristow-Johnson,
// Audio EQ Cookbook).
func bandpass(fc, q, rate float64) biquad {
	w0 := 2 * math.Pi * fc / rate
	al := math.Sin(w0) / (2 * q)
	a0 := 1 + al
	return biquad{b0: al / a0, a1: -2 * math.Cos(w0) / a0, a2: (1 - al) / a0}
}

// run filters x in place. The band-pass has b1 = 0 and b2 = −b0, which
// saves two multiplications a sample.
func (f biquad) run(x []float64) {
	var x1, x2, y1, y2 float64
	for i, v := range x {
		y := f.b0*(v-x2) - f.a1*y1 - f.a2*y2
		x2, x1 = x1, v
		y2, y1 = y1, y
		x[i] = y
	}
}

// lowpass runs a one-pole low-pass with corner fc, twice (12 dB/octave).
func lowpass(x []float64, fc, rate float64) {
	a := math.Exp(-2 * math.Pi * fc / rate)
	for pass := 0; pass < 2; pass++ {
		y := 0.0
		for i, v := range x {
			y = (1-a)*v + a*y
			x[i] = y
		}
	}
}

func rms(x []float64) float64 {
	s := 0.0
	for _, v := range x {
		s += v * v
	}
	return math.Sqrt(s / float64(max(len(x), 1)))
}

// white fills buf with white noise, uniform in [−1, 1), two samples per
// 64-bit draw: cheap, and near-Gaussian once filtered.
func white(buf []float64, rng *rand.Rand) {
	const s31 = 1.0 / (1 << 31)
	for i := 0; i < len(buf); i += 2 {
		u := rng.Uint64()
		buf[i] = float64(int32(u)) * s31
		if i+1 < len(buf) {
			buf[i+1] = float64(int32(u>>32)) * s31
		}
	}
}

// addNoise adds white noise shaped by shape (in place) and scaled to the
// given RMS. buf is scratch of len(dst).
func addNoise(dst, buf []float64, rng *rand.Rand, shape func([]float64), level float64) {
	if level <= 0 {
		return
	}
	white(buf, rng)
	if shape != nil {
		shape(buf)
	}
	g := level / math.Max(rms(buf), 1e-300)
	for i, v := range buf {
		dst[i] += g * v
	}
}

func scale(x []float64, g float64) {
	for i := range x {
		x[i] *= g
	}
}

// limit scales x down so its peak is at most peakLimit.
func limit(x []float64) {
	peak := 0.0
	for _, v := range x {
		peak = math.Max(peak, math.Abs(v))
	}
	if peak > peakLimit {
		scale(x, peakLimit/peak)
	}
}

// humTones are mains hum lines, 50 Hz and harmonics, with 100 Hz (twice
// line frequency, magnetic forces in motors) the strongest.
func humTones(rng *rand.Rand, g float64) []tone {
	hz := []float64{50, 100, 150, 200, 300}
	amp := []float64{0.0012, 0.0025, 0.001, 0.0006, 0.0004}
	out := make([]tone, len(hz))
	for i := range hz {
		out[i] = tone{order: hz[i], amp: g * amp[i], phase: 2 * math.Pi * rng.Float64()}
	}
	return out
}

// clock is the angular rate of a 1 Hz "shaft" per block, for fixed-
// frequency lines.
func (s *synth) clock(n int) []float64 {
	om := make([]float64, (n+block-1)/block)
	for i := range om {
		om[i] = 2 * math.Pi / s.rate
	}
	return om
}

// reflection is one early reflection: a delayed, scaled copy of the
// machine signal.
type reflection struct {
	delay int
	gain  float64
}

// reflections draws a room's early reflections. Delays are uniform up to
// the time sound takes to cross the room twice (at most 150 ms); amplitudes
// decay 60 dB per Sabine reverberation time, RT60 = 0.161·V / Σ S_i·α_i,
// and are scaled so the reflections carry earlyShare of the reverberant energy of
// the room, 1/r_c² re the direct sound at 1 m, with the critical distance
// r_c = 0.057·√(V/RT60) m (omnidirectional source).
func (s *synth) reflections(rng *rand.Rand, r *machine.Room) []reflection {
	if r == nil || len(r.Size) != 3 || len(r.Absorption) != 6 {
		return nil
	}
	l, w, h := r.Size[0], r.Size[1], r.Size[2]
	vol := l * w * h
	areas := []float64{w * h, w * h, l * h, l * h, l * w, l * w}
	abs := 0.0
	for i, a := range areas {
		abs += a * r.Absorption[i]
	}
	rt60 := 0.161 * vol / abs
	rc := 0.057 * math.Sqrt(vol/rt60)
	temp := 20.0
	if r.TemperatureC != nil {
		temp = *r.TemperatureC
	}
	c := 331.3 + 0.606*temp
	maxDelay := math.Min(2*math.Max(l, math.Max(w, h))/c, 0.15)
	out := make([]reflection, 12)
	energy := 0.0
	for i := range out {
		tau := 0.003 + (maxDelay-0.003)*rng.Float64()
		g := math.Pow(10, -3*tau/rt60)
		if rng.IntN(2) == 0 {
			g = -g
		}
		out[i] = reflection{delay: int(math.Round(tau * s.rate)), gain: g}
		energy += g * g
	}
	k := math.Sqrt(earlyShare / (rc * rc) / energy)
	for i := range out {
		out[i].gain *= k
	}
	return out
}

// ambient adds a room's noise floor and mains hum, scaled by g: one white
// sequence gives both the hiss (as is) and the rumble (low-passed at
// 120 Hz), which saves a second noise source.
func (s *synth) ambient(dst, buf []float64, rng *rand.Rand, g float64) {
	white(buf, rng)
	hiss := 0.0015 * g / math.Max(rms(buf), 1e-300)
	for i, v := range buf {
		dst[i] += hiss * v
	}
	lowpass(buf, 120, s.rate)
	rumble := 0.004 * g / math.Max(rms(buf), 1e-300)
	for i, v := range buf {
		dst[i] += rumble * v
	}
	addTones(dst, humTones(rng, g), 0, s.clock(len(dst)))
}

// take synthesises one file. The result lives in a work buffer: it is
// valid until the next call.
func (s *synth) take(t take, seconds float64) ([]float64, error) {
	if t.background {
		return s.background(t, seconds), nil
	}
	rng := s.stream("take/" + t.path)
	n := int(math.Round(seconds * s.rate))
	v := s.voiceOf(t.m)
	f0 := machine.ShaftHz(t.c.RPM)
	omega := s.speedTrack(rng, n, f0, t.c.BandPercent/100)

	src, buf, out := s.buffers(n)
	addTones(src, v.tones, 2*math.Pi*rng.Float64(), omega)
	addNoise(src, buf, rng, bandpass(v.resHz, v.resQ, s.rate).run, v.res)
	addNoise(src, buf, rng, bandpass(4000, 0.8, s.rate).run, v.bearing)
	addNoise(src, buf, rng, func(x []float64) { lowpass(x, v.flowHz, s.rate) }, v.flow)
	level := sourceRMS * math.Pow(t.c.RPM/maxRPM(t.m, false), speedLawDB/20.0)
	scale(src, level/math.Max(rms(src), 1e-300))
	switch t.fault {
	case "":
	case faultOuterRace:
		s.addOuterRace(src, buf, rng, t.m, omega, level)
	default:
		if err := s.addCue(src, buf, rng, t, omega, level); err != nil {
			return nil, fmt.Errorf("demoplant: %s: %w", t.path, err)
		}
	}

	d := []float64{0.5, 1, 1.5}[t.dist] + []float64{0.5, 0.5, 0.8}[t.dist]*rng.Float64()
	for i, x := range src {
		out[i] = x / d
	}
	for _, r := range s.reflections(rng, s.p.Room(t.m.Room)) {
		for i := r.delay; i < n; i++ {
			out[i] += r.gain * src[i-r.delay]
		}
	}
	s.ambient(out, buf, rng, 1)
	limit(out)
	return out, nil
}

// addCue adds the fault of an anomalous take made by the fault-cue models
// of augment/fault (the ones the synthetic training cues use), at the
// take's mean shaft rate (the speed wanders by well under 1 %), with levels
// re the machine signal's RMS level:
//   - faultBladeRub: an unbalanced fan rotor, the raised 1× order, whose
//     blade tips strike the casing once per revolution: an impact train at
//     the shaft rate with a little jitter, ringing a casing resonance;
//   - faultInnerRace: an inner-race defect of the machine's first bearing
//     at its BPFI less slip, load-modulated at its shaft's rate.
//
// Each cue's mean is taken out. buf is scratch of len(src).
func (s *synth) addCue(src, buf []float64, rng *rand.Rand, t take, omega []float64, level float64) error {
	mean := 0.0
	for _, om := range omega {
		mean += om
	}
	shaft := mean / float64(max(len(omega), 1)) * s.rate / (2 * math.Pi)
	var cues []fault.Cue
	switch t.fault {
	case faultBladeRub:
		cues = []fault.Cue{
			fault.Orders{Kind: fault.KindImbalance, ShaftHz: shaft, SeverityDB: rubOrdersDB},
			fault.Impact{RateHz: shaft, JitterFrac: rubJitter, ShaftHz: shaft, ResonanceHz: rubResonanceHz,
				Damping: rubDamping, SeverityDB: rubImpactDB},
		}
	case faultInnerRace:
		if len(t.m.Bearings) == 0 {
			return fmt.Errorf("machine %q has no bearing for an inner-race defect", t.m.ID)
		}
		b := t.m.Bearings[0]
		fr := t.m.ShaftRates(shaft)[b.Shaft]
		r := b.Rates(fr)
		cues = []fault.Cue{fault.Bearing{Kind: fault.KindInnerRace, ShaftHz: fr, DefectHz: r.BPFI * (1 - faultSlip),
			CageHz: r.FTF, ResonanceHz: innerRaceHz, Damping: innerRaceDamping, JitterFrac: faultJitter,
			SeverityDB: innerRaceDB}}
	default:
		return fmt.Errorf("unknown fault %q", t.fault)
	}
	for _, c := range cues {
		y, err := c.Synthesize(buf, len(src), s.rate, level, rng)
		if err != nil {
			return err
		}
		// A ringing impact train has a mean (each ring's damped sine
		// integrates to about 1/ω_d); a microphone does not pass it.
		dc := 0.0
		for _, v := range y {
			dc += v
		}
		dc /= float64(max(len(y), 1))
		for i, v := range y {
			src[i] += v - dc
		}
	}
	return nil
}

// addOuterRace adds impacts of an outer-race spall on the machine's first
// bearing: one per ball pass, at BPFO of the bearing's shaft less slip, with
// jitter, each ringing a damped resonance; the train's RMS is faultDB re
// level.
func (s *synth) addOuterRace(src, buf []float64, rng *rand.Rand, m *machine.Machine, omega []float64, level float64) {
	if len(m.Bearings) == 0 {
		return
	}
	b := m.Bearings[0]
	order := b.Orders().BPFO * m.ShaftRates(1)[b.Shaft]
	for i := range buf {
		buf[i] = 0
	}
	n := len(buf)
	bpfo := func(pos float64) float64 {
		return order * omega[int(pos)/block] * s.rate / (2 * math.Pi) * (1 - faultSlip)
	}
	pos := rng.Float64() * s.rate / bpfo(0)
	for int(pos) < n {
		buf[int(pos)] = 0.8 + 0.4*rng.Float64()
		pos += s.rate / bpfo(pos) * (1 + faultJitter*rng.NormFloat64())
	}
	// Two-pole resonator: impulse response e^(−ζωn·t)·sin(ωd·t).
	wn := 2 * math.Pi * faultResonanceHz / s.rate
	r := math.Exp(-faultDamping * wn)
	c := 2 * r * math.Cos(wn*math.Sqrt(1-faultDamping*faultDamping))
	var y1, y2 float64
	for i, x := range buf {
		y := x + c*y1 - r*r*y2
		y2, y1 = y1, y
		buf[i] = y
	}
	g := level * math.Pow(10, faultDB/20.0) / math.Max(rms(buf), 1e-300)
	for i, x := range buf {
		src[i] += g * x
	}
}

// background synthesises plant noise without any of the plant's machines:
// rumble, hiss, hum and a distant 12-blade blower heard through walls.
func (s *synth) background(t take, seconds float64) []float64 {
	rng := s.stream("take/" + t.path)
	n := int(math.Round(seconds * s.rate))
	out, buf, far := s.buffers(n)
	addNoise(out, buf, rng, func(x []float64) { lowpass(x, 80, s.rate) }, 0.02)
	addNoise(out, buf, rng, func(x []float64) { lowpass(x, 600, s.rate) }, 0.01)
	addNoise(out, buf, rng, nil, 0.003)
	addTones(out, humTones(rng, 2), 0, s.clock(n))

	f0 := machine.ShaftHz(1482)
	var blower []tone
	for k := 1; k <= 4; k++ {
		blower = append(blower, tone{order: float64(k), amp: 0.004 / float64(k), phase: 2 * math.Pi * rng.Float64()})
	}
	for h, a := range []float64{0.008, 0.003} {
		blower = append(blower, tone{order: float64(12 * (h + 1)), amp: a, phase: 2 * math.Pi * rng.Float64()})
	}
	addTones(far, blower, 0, s.speedTrack(rng, n, f0, 0.005))
	lowpass(far, 500, s.rate)
	for i, x := range far {
		out[i] += x
	}
	limit(out)
	return out
}
