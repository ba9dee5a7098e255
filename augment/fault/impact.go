package fault

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Impact is a looseness cue: transients ringing a structural resonance,
// either isolated at random times or a train at a rate.
type Impact struct {
	// Count is the number of isolated transients, at times drawn uniformly
	// inside the clip, used when RateHz is 0 (0 means 1).
	Count int
	// RateHz, when positive, makes a train of transients at this rate (for
	// looseness, typically the shaft rate), with slip jitter JitterFrac.
	RateHz     float64
	JitterFrac float64
	// ShaftHz is recorded in the label (optional).
	ShaftHz float64
	// ResonanceHz and Damping as for Bearing (0 means the defaults).
	ResonanceHz, Damping float64
	// SeverityDB is the cue level relative to the clip RMS. An isolated
	// transient's RMS is averaged over the whole clip, so its peak is far
	// above that level.
	SeverityDB float64
}

func (c Impact) res() resonance { return resonance{c.ResonanceHz, c.Damping}.withDefaults() }

// Validate reports whether the cue can be synthesised at fs Hz.
func (c Impact) Validate(fs float64) error {
	if err := checkFS(fs); err != nil {
		return err
	}
	if c.Count < 0 {
		return fmt.Errorf("fault: impact: count %d must not be negative", c.Count)
	}
	if c.RateHz != 0 {
		if err := checkRate(KindImpact, "rate", c.RateHz, fs); err != nil {
			return err
		}
	}
	if c.ShaftHz < 0 || math.IsNaN(c.ShaftHz) {
		return fmt.Errorf("fault: impact: shaft rate %g Hz must not be negative", c.ShaftHz)
	}
	if err := checkJitter(KindImpact, c.JitterFrac); err != nil {
		return err
	}
	if err := checkSeverity(KindImpact, c.SeverityDB); err != nil {
		return err
	}
	return c.res().validate(KindImpact, fs)
}

// Label describes the cue.
func (c Impact) Label() Label {
	f := map[string]float64{}
	if c.RateHz > 0 {
		f["rate"] = c.RateHz
	}
	if c.ShaftHz > 0 {
		f["shaft"] = c.ShaftHz
	}
	return Label{Kind: KindImpact, Frequencies: f, ShaftHz: c.ShaftHz, SeverityDB: c.SeverityDB, ResonanceHz: c.res().hz}
}

// Synthesize writes the cue; see Cue. Draw order: the times, then one
// amplitude per transient.
func (c Impact) Synthesize(dst []float64, n int, fs, clipRMS float64, rng *rand.Rand) ([]float64, error) {
	dst, err := prepare(c, dst, n, fs, clipRMS, rng)
	if err != nil {
		return dst, err
	}
	end := float64(n) / fs
	var times []float64
	if c.RateHz > 0 {
		times = train(c.RateHz, c.JitterFrac, -c.res().settle(), end, rng)
	} else {
		count := c.Count
		if count == 0 {
			count = 1
		}
		times = uniformTimes(count, end, rng)
	}
	amps := make([]float64, len(times))
	for i := range amps {
		amps[i] = 0.5 + 0.5*rng.Float64()
	}
	c.res().ring(dst, fs, times, amps)
	return dst, setLevel(dst, clipRMS, c.SeverityDB, KindImpact)
}
