package machine

import "math"

// stepRule checks the plant.toml keys of one recipe step kind (range,
// units, modes, weighting, files) and fills defaults. Increment and the kind
// name are checked before it runs.
type stepRule func(v *validator, loc, key string, s *Step, nyquist float64)

// stepRules are the recipe step kinds in the order StepKinds lists them,
// each with the checks of its keys. How a kind is drawn, applied, guarded
// and recorded lives in augment's step table (one file per kind); a test
// there ties the two lists together.
var stepRules = []struct {
	kind  string
	check stepRule
}{
	{"speed", both(needRange(-20, 20, "%"), checkSpeed)},
	{"gain", needRange(-40, 20, "dB")},
	{"invert", noRange},
	{"shift", checkShift},
	{"filter", checkFilter},
	{"noise", checkNoise},
	{"background", both(needRange(-20, 80, "dB"), checkWeighting)},
	{"room", noRange},
	{"ir", checkIR},
	{"tempo", both(needRange(-50, 50, "%"), needNonphysical)},
	{"pitch", both(needRange(-1200, 1200, "cents"), needNonphysical)},
}

// StepKinds are the recipe step kinds. tempo and pitch are non-physical and
// need nonphysical = true.
func StepKinds() []string {
	out := make([]string, len(stepRules))
	for i, r := range stepRules {
		out[i] = r.kind
	}
	return out
}

func stepRuleFor(kind string) stepRule {
	for _, r := range stepRules {
		if r.kind == kind {
			return r.check
		}
	}
	return nil
}

func both(rules ...stepRule) stepRule {
	return func(v *validator, loc, key string, s *Step, nyq float64) {
		for _, r := range rules {
			r(v, loc, key, s, nyq)
		}
	}
}

func needRange(lo, hi float64, unit string) stepRule {
	return func(v *validator, loc, key string, s *Step, _ float64) {
		v.pair(loc, key+".range", "range", s.Range, lo, hi, unit)
	}
}

func noRange(v *validator, loc, key string, s *Step, _ float64) {
	if len(s.Range) != 0 {
		v.bad(loc, key+".range", "range", "step kind %q takes no range", s.Kind)
	}
}

func checkShift(v *validator, loc, key string, s *Step, nyq float64) {
	needRange(-60000, 60000, "ms")(v, loc, key, s, nyq)
	if s.Mode == "" {
		s.Mode = "circular"
	}
	if s.Mode != "circular" && s.Mode != "zero" {
		v.bad(loc, key+".mode", "mode", "%q is not one of circular, zero", s.Mode)
	}
}

func checkFilter(v *validator, loc, key string, s *Step, nyq float64) {
	switch s.Mode {
	case "telephone":
	case "lowpass", "highpass", "bandpass":
		needRange(10, math.Max(nyq*0.98, 10), "Hz")(v, loc, key, s, nyq)
	default:
		v.bad(loc, key+".mode", "mode", "%q is not one of lowpass, highpass, bandpass, telephone", s.Mode)
	}
	if s.Order < 0 || s.Order > 16 {
		v.bad(loc, key+".order", "order", "%d is outside 0 … 16", s.Order)
	}
	if s.Q < 0 || s.Q > 50 {
		v.bad(loc, key+".q", "q", "%g is outside 0 … 50", s.Q)
	}
}

func checkNoise(v *validator, loc, key string, s *Step, nyq float64) {
	needRange(-20, 80, "dB")(v, loc, key, s, nyq)
	if s.Mode == "" {
		s.Mode = "any"
	}
	switch s.Mode {
	case "white", "pink", "brown", "any":
	default:
		v.bad(loc, key+".mode", "mode", "%q is not one of white, pink, brown, any", s.Mode)
	}
	checkWeighting(v, loc, key, s, nyq)
}

func checkWeighting(v *validator, loc, key string, s *Step, _ float64) {
	switch s.Weighting {
	case "", "none", "A":
	default:
		v.bad(loc, key+".weighting", "weighting", "%q is not one of none, A", s.Weighting)
	}
}

func checkIR(v *validator, loc, key string, s *Step, _ float64) {
	if len(s.Files) == 0 {
		v.bad(loc, key+".files", "files", "step kind ir needs at least one impulse-response file")
	}
}

func needNonphysical(v *validator, loc, key string, s *Step, _ float64) {
	if !s.Nonphysical {
		v.bad(loc, key+".nonphysical", "kind", "step kind %q breaks machine physics (harmonics no longer follow speed); set nonphysical = true to use it", s.Kind)
	}
}

func checkSpeed(v *validator, loc, key string, s *Step, _ float64) {
	switch s.Mode {
	case "", SpeedResample:
		if s.Orders != nil {
			v.bad(loc, key+".orders", "orders", "only an order-aware speed step (mode = %q) takes orders", SpeedOrders)
		}
		if s.BandwidthHz != nil {
			v.bad(loc, key+".bandwidth_hz", "bandwidth_hz", "only an order-aware speed step (mode = %q) takes bandwidth_hz", SpeedOrders)
		}
	case SpeedOrders:
		if s.Orders != nil && (*s.Orders < 1 || *s.Orders > 64) {
			v.bad(loc, key+".orders", "orders", "%d is outside 1 … 64", *s.Orders)
		}
		if s.BandwidthHz != nil {
			v.rangeCheck(loc, key+".bandwidth_hz", "bandwidth_hz", *s.BandwidthHz, 0.1, 20, "Hz")
		}
	default:
		v.bad(loc, key+".mode", "mode", "%q is not one of %s, %s", s.Mode, SpeedResample, SpeedOrders)
	}
}
