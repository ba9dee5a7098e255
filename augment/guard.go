package augment

import (
	"math"

	"thrum/machine"
	"thrum/machine/ledger"
)

// Rejection reasons recorded in the ledger by the credibility guard.
const (
	RejectSpeedBand = "speed-outside-band"
	RejectHoldOut   = "speed-in-hold-out-band"
	RejectSNR       = "snr-outside-range"
	RejectRT60      = "rt60-outside-room-range"
	RejectSilent    = "silent-output"
	RejectIR        = "impulse-response-unusable"
	// RejectSNRUndefined: the re-measured SNR has no value (a silent clip,
	// or nothing added); the step's undefined map says which.
	RejectSNRUndefined = "snr-undefined"
	// RejectRT60Unmeasurable: the response's T30 cannot be measured (it
	// never decays 35 dB inside its length); the step's undefined map
	// gives the room or file and the cause.
	RejectRT60Unmeasurable = "rt60-unmeasurable"
	// RejectSilentBackground: the background drawn has only zero samples.
	RejectSilentBackground = "silent-background"
	// RejectBackgroundSamples: the background drawn has a non-finite or
	// absurd sample (see machine.SampleError).
	RejectBackgroundSamples = "background-samples-unusable"
	// RejectNonFiniteOutput: the output holds a NaN or an infinity.
	RejectNonFiniteOutput = "non-finite-output"
	// RejectNonFiniteValue: a value of the ledger line is NaN or infinite
	// (the encoder's guard; the line's undefined map names the field).
	RejectNonFiniteValue = "non-finite-value"
)

// workspace holds a worker's reusable buffers.
type workspace struct {
	a, b []float64
	// src and spd hold a speed variant's source span and its resampled
	// samples (speedSource).
	src, spd []float64
	// recorded holds a recorded clip scaled into PCM range.
	recorded []float64
}

// apply runs the drawn steps in order on a copy of x and checks the result
// against the credibility guard. It returns the output, the step records
// with values measured while applying (re-measured SNR, RT60, gains), and a
// rejection reason ("" when the variant is credible; when several steps
// fail, the last one's).
//
// With speedDone, x already carries the drawn speed change (read from the
// source by speedSource) and the speed steps only record and guard it.
func (e *env) apply(ws *workspace, x []float64, drawn []Drawn, c *machine.Condition, speedDone bool) ([]float64, []ledger.StepRecord, string) {
	cur := append(ws.a[:0], x...)
	ws.a = cur
	recs := make([]ledger.StepRecord, 0, len(drawn))
	reason := ""
	for _, d := range drawn {
		se := stepEnv{env: e, step: d.Step, cond: c, speedDone: speedDone}
		out := d.Params.apply(se, ws.spare(cur), cur)
		if r := d.Params.guard(se); r != "" {
			reason = r
		}
		ws.keep(cur, out)
		cur = out
		recs = append(recs, d.Record())
	}
	if reason == "" {
		if !finiteSamples(cur) {
			reason = RejectNonFiniteOutput
		} else if PeakAbs(cur) == 0 {
			reason = RejectSilent
		}
	}
	return cur, recs, reason
}

// undefined records that a step's measured value has no value, and why;
// nothing when why is "".
func undefined(rec *ledger.StepRecord, key, why string) {
	if why == "" {
		return
	}
	if rec.Undefined == nil {
		rec.Undefined = map[string]string{}
	}
	rec.Undefined[key] = why
}

func finiteSamples(x []float64) bool {
	for _, v := range x {
		if v-v != 0 { // NaN or ±Inf
			return false
		}
	}
	return true
}

// spare returns the buffer of the pair that cur is not, emptied.
func (w *workspace) spare(cur []float64) []float64 {
	if len(cur) > 0 && len(w.b) > 0 && &cur[0] == &w.b[0] {
		return w.a[:0]
	}
	return w.b[:0]
}

// keep stores out back into the pair so its capacity is reused.
func (w *workspace) keep(cur, out []float64) {
	if len(cur) > 0 && len(w.b) > 0 && &cur[0] == &w.b[0] {
		w.a = out
	} else {
		w.b = out
	}
}

// measuredSNR re-measures a mix: the added component is out − in. Without
// weighting it is summed in place; with A-weighting it is filtered as a
// signal of its own. When the SNR has no finite value (a silent clip, or
// nothing added) it returns why instead.
func measuredSNR(in, out []float64, fs float64, w Weighting) (snr float64, why string) {
	if w == WeightNone {
		var ps, pn float64
		for i, v := range in {
			d := out[i] - v
			ps += v * v
			pn += d * d
		}
		snr = 10 * math.Log10(ps/pn)
	} else {
		n := make([]float64, len(in))
		for i := range n {
			n[i] = out[i] - in[i]
		}
		snr = SNR(in, n, fs, w)
	}
	if snr-snr == 0 {
		return snr, ""
	}
	return 0, snrUndefined(in, out)
}

// snrUndefined says why an SNR has no value.
func snrUndefined(in, out []float64) string {
	if PeakAbs(in) == 0 {
		return "SNR undefined: the clip is silent"
	}
	for i, v := range in {
		if out[i] != v {
			return "SNR undefined: the mix is not finite"
		}
	}
	return "SNR undefined: nothing was added (the added signal is silent)"
}

// snrOK: the re-measured SNR must match the target within 0.1 dB and the
// target must lie inside the step's range.
func snrOK(got, target float64, r []float64) bool {
	return math.Abs(got-target) <= 0.1 && target >= r[0]-1e-9 && target <= r[1]+1e-9
}
