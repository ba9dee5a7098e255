package fault

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"sort"
)

// Kind names, as written in a plant's fault plan and in labels.
const (
	KindOuterRace    = "outer-race"
	KindInnerRace    = "inner-race"
	KindBall         = "ball"
	KindCage         = "cage"
	KindImpact       = "impact"
	KindImbalance    = "imbalance"
	KindMisalignment = "misalignment"
	KindGearTooth    = "gear-tooth"
)

// Kinds returns the cue kinds this package synthesises, in a fixed order.
func Kinds() []string {
	return []string{
		KindOuterRace, KindInnerRace, KindBall, KindCage,
		KindImpact, KindImbalance, KindMisalignment, KindGearTooth,
	}
}

// Defaults for zero-valued fields.
const (
	// DefaultResonanceHz lies in the 2–5 kHz band where housings of small
	// and medium machines commonly ring (common practice).
	DefaultResonanceHz = 3000.0
	// DefaultDamping is the resonance's damping ratio ζ (common practice
	// for structural modes of bolted housings: a few percent).
	DefaultDamping = 0.05
	// DefaultJitterFrac is the random slip between bearing impacts, 1.5 %
	// of the interval (Randall & Antoni 2011: 1–2 %). The zero value of a
	// JitterFrac field means an exactly periodic train, so callers that
	// want slip set this value.
	DefaultJitterFrac = 0.015
	// DefaultModDepth is the load-zone modulation depth m.
	DefaultModDepth = 0.5
)

// Label describes a cue exactly: its kind, the rates it was built from, the
// shaft rate, the level relative to the clip and the resonance it rings.
type Label struct {
	Kind string
	// Frequencies are the cue's rates in Hz by trade name: shaft, bpfo,
	// bpfi, bsf, ftf, defect (the impact repetition rate), gmf, fault_shaft,
	// rate, order1..order3.
	Frequencies map[string]float64
	ShaftHz     float64
	SeverityDB  float64
	// ResonanceHz is the structural resonance the cue rings, 0 for tonal
	// cues.
	ResonanceHz float64
	// Bearing names the machine's bearing a bearing cue was built for;
	// nil for other cues and for a bearing cue built without one.
	Bearing *BearingRef
}

// BearingRef names one of a machine's bearings: its index in the
// machine's bearing list (0 first) and its name, "" when it has none.
type BearingRef struct {
	Index int
	Name  string
}

// Cue is a synthetic fault cue.
type Cue interface {
	// Validate reports whether the cue's parameters make sense at sample
	// rate fs.
	Validate(fs float64) error
	// Synthesize writes n samples of the cue at fs Hz into dst (reused when
	// its capacity is at least n; nil allocates), scaled so its RMS is
	// clipRMS·10^(SeverityDB/20), and returns it. It fails if Validate
	// does, or if clipRMS is not positive and finite. It panics if n < 0
	// or rng is nil.
	Synthesize(dst []float64, n int, fs, clipRMS float64, rng *rand.Rand) ([]float64, error)
	// Label describes the cue.
	Label() Label
}

// ErrSilentClip is returned for a clip whose RMS is zero: a level relative
// to it is undefined.
var ErrSilentClip = errors.New("fault: clip is silent; severity relative to its RMS is undefined")

// Add writes clip + cue into dst and returns it with the cue's label. dst
// may be clip itself (in place), is reused when its capacity is at least
// len(clip), and nil allocates. The cue level is set against the RMS of
// clip over its whole length.
func Add(dst, clip []float64, fs float64, c Cue, rng *rand.Rand) ([]float64, Label, error) {
	rms := RMS(clip)
	if rms == 0 {
		return dst, Label{}, ErrSilentClip
	}
	cue, err := c.Synthesize(nil, len(clip), fs, rms, rng)
	if err != nil {
		return dst, Label{}, err
	}
	dst = resize(dst, len(clip))
	for i, v := range clip {
		dst[i] = v + cue[i]
	}
	return dst, c.Label(), nil
}

// RMS returns the root mean square of x, 0 for an empty x.
func RMS(x []float64) float64 {
	if len(x) == 0 {
		return 0
	}
	var s float64
	for _, v := range x {
		s += v * v
	}
	return math.Sqrt(s / float64(len(x)))
}

func resize(s []float64, n int) []float64 {
	if n < 0 {
		panic(fmt.Sprintf("fault: negative length %d", n))
	}
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// prepare checks the common arguments of Synthesize and returns a zeroed
// destination of length n.
func prepare(c Cue, dst []float64, n int, fs, clipRMS float64, rng *rand.Rand) ([]float64, error) {
	if rng == nil {
		panic("fault: nil random generator")
	}
	dst = resize(dst, n)
	clear(dst)
	if err := c.Validate(fs); err != nil {
		return dst, err
	}
	if !(clipRMS > 0) || math.IsInf(clipRMS, 0) {
		if clipRMS == 0 {
			return dst, ErrSilentClip
		}
		return dst, fmt.Errorf("fault: clip RMS %g must be positive and finite", clipRMS)
	}
	return dst, nil
}

// setLevel scales x so its RMS is clipRMS·10^(db/20).
func setLevel(x []float64, clipRMS, db float64, kind string) error {
	if len(x) == 0 {
		return nil
	}
	r := RMS(x)
	if r == 0 || math.IsNaN(r) || math.IsInf(r, 0) {
		return fmt.Errorf("fault: %s: cue is silent over %d samples (rates too low for the clip?)", kind, len(x))
	}
	g := clipRMS * math.Pow(10, db/20) / r
	for i := range x {
		x[i] *= g
	}
	return nil
}

// resonance holds a structural mode: frequency in Hz and damping ratio.
type resonance struct{ hz, zeta float64 }

func (r resonance) withDefaults() resonance {
	if r.hz == 0 {
		r.hz = DefaultResonanceHz
	}
	if r.zeta == 0 {
		r.zeta = DefaultDamping
	}
	return r
}

func (r resonance) validate(kind string, fs float64) error {
	switch {
	case !(r.hz > 0) || r.hz >= fs/2:
		return fmt.Errorf("fault: %s: resonance %g Hz must be in (0, %g) (below Nyquist)", kind, r.hz, fs/2)
	case !(r.zeta > 0 && r.zeta < 1):
		return fmt.Errorf("fault: %s: damping ratio %g must be in (0, 1)", kind, r.zeta)
	}
	return nil
}

// pole returns s = −ζω_n + jω_d.
func (r resonance) pole() complex128 {
	wn := 2 * math.Pi * r.hz
	return complex(-r.zeta*wn, wn*math.Sqrt(1-r.zeta*r.zeta))
}

// settle is the time for the ring to decay by e^−14 (about −120 dB).
func (r resonance) settle() float64 { return 14 / (r.zeta * 2 * math.Pi * r.hz) }

// ring adds to x, sampled at fs from t = 0, the impulse responses
// amps[k]·h(t − times[k]) of the resonance, h(τ) = e^{−ζω_n τ}·sin(ω_d τ)
// for τ ≥ 0. times must be ascending; times before 0 contribute their tails.
// Impact k enters at sample ⌈t_k·fs⌉ with its phase advanced by the
// fraction of a sample since t_k, so the ring is exact between samples.
func (r resonance) ring(x []float64, fs float64, times, amps []float64) {
	s := r.pole()
	w := cmplx.Exp(s / complex(fs, 0))
	enter := func(j, i int) complex128 {
		return complex(amps[j], 0) * cmplx.Exp(s*complex(float64(i)/fs-times[j], 0))
	}
	start := func(j int) int { return max(0, int(math.Ceil(times[j]*fs))) }
	var z complex128
	j := 0
	for ; j < len(times) && start(j) == 0; j++ {
		z += enter(j, 0)
	}
	next := len(x)
	if j < len(times) {
		next = start(j)
	}
	for i := 0; i < len(x); i++ {
		if i > 0 {
			z *= w
		}
		if i == next {
			for ; j < len(times) && start(j) <= i; j++ {
				z += enter(j, i)
			}
			next = len(x)
			if j < len(times) {
				next = start(j)
			}
		} else if math.Abs(real(z))+math.Abs(imag(z)) < 1e-150 {
			// The ring has died away, long before subnormal numbers would
			// slow every multiply: skip to the next impact.
			z = 0
			if next >= len(x) {
				return
			}
			i = next - 1
			continue
		}
		x[i] += imag(z)
	}
}

// filter runs x in place through the resonance: y[i] = Im z[i],
// z[i] = z[i−1]·e^{s/fs} + x[i], whose impulse response is h sampled.
func (r resonance) filter(x []float64, fs float64) {
	w := cmplx.Exp(r.pole() / complex(fs, 0))
	var z complex128
	for i, v := range x {
		z = z*w + complex(v, 0)
		x[i] = imag(z)
	}
}

// train returns the impact times of a renewal process at rate Hz with
// relative interval jitter sigma, from before start until end seconds.
// The phase of the train is drawn uniformly. With sigma = 0 the times are
// exactly t_0 + k/rate.
func train(rate, sigma, start, end float64, rng *rand.Rand) []float64 {
	period := 1 / rate
	t0 := start - rng.Float64()*period
	times := make([]float64, 0, int((end-t0)*rate)+2)
	if sigma == 0 {
		for k := 0; ; k++ {
			t := t0 + float64(k)*period
			if t >= end {
				break
			}
			times = append(times, t)
		}
		return times
	}
	for t := t0; t < end; {
		times = append(times, t)
		t += period * (1 + sigma*truncNorm(rng))
	}
	return times
}

// truncNorm draws a standard normal truncated at ±3 by redrawing.
func truncNorm(rng *rand.Rand) float64 {
	for {
		if v := rng.NormFloat64(); math.Abs(v) <= 3 {
			return v
		}
	}
}

// uniformTimes returns count times drawn uniformly in [0, end), ascending.
func uniformTimes(count int, end float64, rng *rand.Rand) []float64 {
	times := make([]float64, count)
	for i := range times {
		times[i] = rng.Float64() * end
	}
	sort.Float64s(times)
	return times
}

func checkRate(kind, name string, hz, fs float64) error {
	if !(hz > 0) || hz >= fs/2 || math.IsInf(hz, 0) {
		return fmt.Errorf("fault: %s: %s %g Hz must be in (0, %g)", kind, name, hz, fs/2)
	}
	return nil
}

func checkSeverity(kind string, db float64) error {
	if math.IsNaN(db) || math.IsInf(db, 0) {
		return fmt.Errorf("fault: %s: severity %g dB must be finite", kind, db)
	}
	return nil
}

func checkJitter(kind string, j float64) error {
	// Beyond 30 % the 3σ truncation lets an interval approach zero.
	if !(j >= 0 && j <= 0.3) {
		return fmt.Errorf("fault: %s: jitter fraction %g must be in [0, 0.3]", kind, j)
	}
	return nil
}

func checkFS(fs float64) error {
	if !(fs > 0) || math.IsInf(fs, 0) {
		return fmt.Errorf("fault: sample rate %g Hz must be positive and finite", fs)
	}
	return nil
}
