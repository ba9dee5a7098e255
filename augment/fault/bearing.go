package fault

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Bearing is a localised rolling-bearing defect cue; see the package doc for
// the model. All rates are the clip's actual rates in Hz.
type Bearing struct {
	// Kind is outer-race, inner-race, ball or cage.
	Kind string
	// ShaftHz is the shaft rate. Required for inner-race (it modulates the
	// impacts); recorded in the label for all kinds.
	ShaftHz float64
	// DefectHz is the impact repetition rate: BPFO, BPFI, 2·BSF or FTF for
	// the four kinds. For cage, 0 means CageHz.
	DefectHz float64
	// CageHz is FTF. Required for ball (it modulates the impacts) and cage.
	CageHz float64
	// ResonanceHz is the structural resonance the impacts ring (0 means
	// DefaultResonanceHz); Damping its damping ratio (0 means
	// DefaultDamping).
	ResonanceHz, Damping float64
	// JitterFrac is the standard deviation of each impact interval relative
	// to the mean interval. 0 is an exactly periodic train; use
	// DefaultJitterFrac for typical slip.
	JitterFrac float64
	// ModDepth is the load-zone modulation depth m in (0, 1] for
	// inner-race and ball (0 means DefaultModDepth); ignored otherwise.
	ModDepth float64
	// SeverityDB is the cue level relative to the clip RMS.
	SeverityDB float64
	// Of names the machine's bearing the rates belong to, for the label;
	// nil when the cue stands alone.
	Of *BearingRef
}

func (b Bearing) withDefaults() Bearing {
	if b.Kind == KindCage && b.DefectHz == 0 {
		b.DefectHz = b.CageHz
	}
	if b.ModDepth == 0 {
		b.ModDepth = DefaultModDepth
	}
	return b
}

func (b Bearing) res() resonance {
	return resonance{b.ResonanceHz, b.Damping}.withDefaults()
}

// Validate reports whether the cue can be synthesised at fs Hz.
func (b Bearing) Validate(fs float64) error {
	if err := checkFS(fs); err != nil {
		return err
	}
	b = b.withDefaults()
	switch b.Kind {
	case KindOuterRace, KindInnerRace, KindBall, KindCage:
	default:
		return fmt.Errorf("fault: bearing kind %q is not outer-race, inner-race, ball or cage", b.Kind)
	}
	if err := checkRate(b.Kind, "defect rate", b.DefectHz, fs); err != nil {
		return err
	}
	switch b.Kind {
	case KindInnerRace:
		if err := checkRate(b.Kind, "shaft rate", b.ShaftHz, fs); err != nil {
			return err
		}
	case KindBall, KindCage:
		if err := checkRate(b.Kind, "cage rate", b.CageHz, fs); err != nil {
			return err
		}
	}
	if b.ShaftHz < 0 || math.IsNaN(b.ShaftHz) {
		return fmt.Errorf("fault: %s: shaft rate %g Hz must not be negative", b.Kind, b.ShaftHz)
	}
	if !(b.ModDepth > 0 && b.ModDepth <= 1) {
		return fmt.Errorf("fault: %s: modulation depth %g must be in (0, 1]", b.Kind, b.ModDepth)
	}
	if err := checkJitter(b.Kind, b.JitterFrac); err != nil {
		return err
	}
	if err := checkSeverity(b.Kind, b.SeverityDB); err != nil {
		return err
	}
	return b.res().validate(b.Kind, fs)
}

// Label describes the cue.
func (b Bearing) Label() Label {
	b = b.withDefaults()
	f := map[string]float64{"defect": b.DefectHz}
	switch b.Kind {
	case KindOuterRace:
		f["bpfo"] = b.DefectHz
	case KindInnerRace:
		f["bpfi"] = b.DefectHz
	case KindBall:
		f["bsf"] = b.DefectHz / 2
	case KindCage:
		f["ftf"] = b.DefectHz
	}
	if b.CageHz > 0 {
		f["ftf"] = b.CageHz
	}
	if b.ShaftHz > 0 {
		f["shaft"] = b.ShaftHz
	}
	l := Label{Kind: b.Kind, Frequencies: f, ShaftHz: b.ShaftHz, SeverityDB: b.SeverityDB, ResonanceHz: b.res().hz}
	if b.Of != nil {
		ref := *b.Of
		l.Bearing = &ref
	}
	return l
}

// Synthesize writes the cue; see Cue.
func (b Bearing) Synthesize(dst []float64, n int, fs, clipRMS float64, rng *rand.Rand) ([]float64, error) {
	dst, err := prepare(b, dst, n, fs, clipRMS, rng)
	if err != nil {
		return dst, err
	}
	b = b.withDefaults()
	if b.Kind == KindCage {
		b.rub(dst, fs, rng)
	} else {
		times, amps := b.impacts(n, fs, rng)
		b.res().ring(dst, fs, times, amps)
	}
	return dst, setLevel(dst, clipRMS, b.SeverityDB, b.Kind)
}

// impacts draws the impact times (from before the clip, so it opens
// mid-fault) and their load-zone amplitudes. Draw order: modulation phase,
// then the train.
func (b Bearing) impacts(n int, fs float64, rng *rand.Rand) (times, amps []float64) {
	modHz := 0.0
	switch b.Kind {
	case KindInnerRace:
		modHz = b.ShaftHz
	case KindBall:
		modHz = b.CageHz
	}
	phi := 2 * math.Pi * rng.Float64()
	times = train(b.DefectHz, b.JitterFrac, -b.res().settle(), float64(n)/fs, rng)
	amps = make([]float64, len(times))
	for k, t := range times {
		amps[k] = 1
		if modHz > 0 {
			amps[k] = 1 - b.ModDepth/2*(1-math.Cos(2*math.Pi*modHz*t+phi))
		}
	}
	return times, amps
}

// rubDuty is the share of a cage revolution the rub lasts.
const rubDuty = 0.25

// rub writes the cage-rub cue: Gaussian friction noise under a Hann window
// of rubDuty cage revolutions, once per revolution with slip jitter, through
// the resonance. Draw order: the rub train, then the noise.
func (b Bearing) rub(x []float64, fs float64, rng *rand.Rand) {
	r := b.res()
	width := rubDuty / b.DefectHz
	start := -r.settle() - width
	starts := train(b.DefectHz, b.JitterFrac, start, float64(len(x))/fs, rng)
	// Noise for the lead-in, so the clip opens with the resonance already
	// excited by any rub that began before it.
	lead := int(math.Ceil(-start * fs))
	buf := make([]float64, lead+len(x))
	// Each rub is a Hann window ½(1 − cos 2πu) over u ∈ [0, 1), computed
	// with a rotating phasor; a rub that starts before the last one ends
	// cuts it short.
	w := complex(math.Cos(2*math.Pi/(width*fs)), math.Sin(2*math.Pi/(width*fs)))
	for k, t0 := range starts {
		lo := max(0, int(math.Ceil((t0)*fs))+lead)
		hi := min(len(buf), int(math.Ceil((t0+width)*fs))+lead)
		if k+1 < len(starts) {
			hi = min(hi, int(math.Ceil(starts[k+1]*fs))+lead)
		}
		arg := 2 * math.Pi * (float64(lo-lead)/fs - t0) / width
		z := complex(math.Cos(arg), math.Sin(arg))
		for i := lo; i < hi; i++ {
			buf[i] = 0.5 * (1 - real(z)) * rng.NormFloat64()
			z *= w
		}
	}
	r.filter(buf, fs)
	copy(x, buf[lead:])
}
