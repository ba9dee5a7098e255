package fault

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
)

// Orders is a cue of raised shaft orders: imbalance (1×) or misalignment
// (2× and 3×), phase-coherent with the shaft.
type Orders struct {
	// Kind is imbalance or misalignment.
	Kind    string
	ShaftHz float64
	// Gains are the relative amplitudes of orders 1, 2, 3, ...; nil means
	// {1} for imbalance and {0, 1, 0.5} for misalignment. Orders at or
	// above Nyquist are left out.
	Gains []float64
	// Phase is the shaft angle θ(0) in radians; nil means drawn uniformly.
	Phase *float64
	// SeverityDB is the cue level relative to the clip RMS.
	SeverityDB float64
}

func (o Orders) gains() []float64 {
	if o.Gains != nil {
		return o.Gains
	}
	if o.Kind == KindMisalignment {
		return []float64{0, 1, 0.5}
	}
	return []float64{1}
}

// Validate reports whether the cue can be synthesised at fs Hz.
func (o Orders) Validate(fs float64) error {
	if err := checkFS(fs); err != nil {
		return err
	}
	if o.Kind != KindImbalance && o.Kind != KindMisalignment {
		return fmt.Errorf("fault: orders kind %q is not imbalance or misalignment", o.Kind)
	}
	if err := checkRate(o.Kind, "shaft rate", o.ShaftHz, fs); err != nil {
		return err
	}
	var any bool
	for k, g := range o.gains() {
		if math.IsNaN(g) || math.IsInf(g, 0) {
			return fmt.Errorf("fault: %s: gain of order %d is %g", o.Kind, k+1, g)
		}
		any = any || (g != 0 && float64(k+1)*o.ShaftHz < fs/2)
	}
	if !any {
		return fmt.Errorf("fault: %s: no order below Nyquist has a non-zero gain", o.Kind)
	}
	if o.Phase != nil && (math.IsNaN(*o.Phase) || math.IsInf(*o.Phase, 0)) {
		return fmt.Errorf("fault: %s: phase %g must be finite", o.Kind, *o.Phase)
	}
	return checkSeverity(o.Kind, o.SeverityDB)
}

// Label describes the cue; Frequencies hold shaft and each raised order
// (order1, order2, ...).
func (o Orders) Label() Label {
	f := map[string]float64{"shaft": o.ShaftHz}
	for k, g := range o.gains() {
		if g != 0 {
			f["order"+strconv.Itoa(k+1)] = float64(k+1) * o.ShaftHz
		}
	}
	return Label{Kind: o.Kind, Frequencies: f, ShaftHz: o.ShaftHz, SeverityDB: o.SeverityDB}
}

// Synthesize writes the cue; see Cue. Draw order: the phase, when not given.
func (o Orders) Synthesize(dst []float64, n int, fs, clipRMS float64, rng *rand.Rand) ([]float64, error) {
	dst, err := prepare(o, dst, n, fs, clipRMS, rng)
	if err != nil {
		return dst, err
	}
	phi := 0.0
	if o.Phase != nil {
		phi = *o.Phase
	} else {
		phi = 2 * math.Pi * rng.Float64()
	}
	for k, g := range o.gains() {
		ord := float64(k + 1)
		if g == 0 || ord*o.ShaftHz >= fs/2 {
			continue
		}
		addTone(dst, g, ord*o.ShaftHz/fs, ord*phi)
	}
	return dst, setLevel(dst, clipRMS, o.SeverityDB, o.Kind)
}

// addTone adds a·cos(2π·cycles·i + phase) to x. It evaluates the cosine
// directly every 1024 samples and rotates a phasor in between, which keeps
// the error near rounding at a fraction of the cost of math.Cos per sample.
func addTone(x []float64, a, cycles, phase float64) {
	const block = 1024
	w := complex(math.Cos(2*math.Pi*cycles), math.Sin(2*math.Pi*cycles))
	for b := 0; b < len(x); b += block {
		arg := 2*math.Pi*math.Mod(cycles*float64(b), 1) + phase
		z := complex(a*math.Cos(arg), a*math.Sin(arg))
		end := min(b+block, len(x))
		for i := b; i < end; i++ {
			x[i] += real(z)
			z *= w
		}
	}
}
