package ledger

import (
	"fmt"
	"maps"
	"math"
	"slices"
	"strconv"
)

// ValueError is a ledger line that cannot be written: a float field holds
// NaN or an infinity, which JSON cannot represent. A value that could not
// be measured belongs in an undefined map with its reason instead.
type ValueError struct {
	Machine string
	// Path is the output file, or for a rejected line the source recording
	// with its clip and variant.
	Path string
	// Field is the JSON path of the value, e.g. steps[2].params.rt60_s.
	Field string
	Value float64
}

func (e *ValueError) Error() string {
	return fmt.Sprintf("ledger: machine %s, %s: %s is %v; a line holds only finite numbers", e.Machine, e.Path, e.Field, e.Value)
}

// where names the line in errors.
func (e *Entry) where() string {
	if e.Path != "" {
		return e.Path
	}
	return fmt.Sprintf("%s clip %d variant %d", e.Source, e.Clip, e.Variant)
}

// Check returns a *ValueError for the first non-finite float of the line
// (fields in JSON order, map keys sorted), or nil.
func Check(e *Entry) error {
	var bad *ValueError
	visitFloats(e, func(field string, v *float64) {
		if bad == nil && !finite(*v) {
			bad = &ValueError{Machine: e.Machine, Path: e.where(), Field: field, Value: *v}
		}
	})
	if bad != nil {
		return bad
	}
	return nil
}

// Defined returns a copy of e in which every non-finite float is removed
// and named in an undefined map with reason: a step parameter moves from
// the step's Params to its Undefined, any other field is set to 0 and
// named in the line's Undefined. A line with no such value is returned
// as is.
func Defined(e Entry, reason string) Entry {
	if Check(&e) == nil {
		return e
	}
	out := e
	out.Steps = make([]StepRecord, len(e.Steps))
	for i, s := range e.Steps {
		c := s
		c.Params, c.Undefined = nil, nil
		for k, v := range s.Params {
			if finite(v) {
				if c.Params == nil {
					c.Params = map[string]float64{}
				}
				c.Params[k] = v
			} else {
				if c.Undefined == nil {
					c.Undefined = map[string]string{}
				}
				c.Undefined[k] = fmt.Sprintf("%s (%v)", reason, v)
			}
		}
		for k, why := range s.Undefined {
			if c.Undefined == nil {
				c.Undefined = map[string]string{}
			}
			c.Undefined[k] = why
		}
		out.Steps[i] = c
	}
	out.Undefined = make(map[string]string, len(e.Undefined)+1)
	for k, v := range e.Undefined {
		out.Undefined[k] = v
	}
	if e.Fault != nil {
		f := *e.Fault
		f.Frequencies = make(map[string]float64, len(e.Fault.Frequencies))
		for k, v := range e.Fault.Frequencies {
			if finite(v) {
				f.Frequencies[k] = v
			} else {
				out.Undefined["fault.frequencies."+k] = fmt.Sprintf("%s (%v)", reason, v)
			}
		}
		out.Fault = &f
	}
	if len(e.Extra) > 0 {
		out.Extra = make(map[string]any, len(e.Extra))
		for k, v := range e.Extra {
			out.Extra[k] = v
		}
	}
	visitFloats(&out, func(field string, v *float64) {
		if !finite(*v) {
			out.Undefined[field] = fmt.Sprintf("%s (%v)", reason, *v)
			*v = 0
		}
	})
	for k, v := range out.Extra {
		if f, ok := v.(float64); ok && !finite(f) {
			out.Undefined["extra."+k] = fmt.Sprintf("%s (%v)", reason, f)
			out.Extra[k] = 0.0
		}
	}
	if len(out.Undefined) == 0 {
		out.Undefined = nil
	}
	return out
}

// visitFloats calls fn with every float of e, by JSON path, in JSON field
// order with map keys sorted. Values in Extra are visited when they are
// float64 (the only float a decoded line holds).
func visitFloats(e *Entry, fn func(field string, v *float64)) {
	fn("speed", &e.Speed)
	fn("speed_drawn", &e.SpeedDrawn)
	for i := range e.Steps {
		p := e.Steps[i].Params
		for _, k := range slices.Sorted(maps.Keys(p)) {
			v := p[k]
			fn("steps["+strconv.Itoa(i)+"].params."+k, &v)
		}
	}
	fn("scale", &e.Scale)
	if f := e.Fault; f != nil {
		for _, k := range slices.Sorted(maps.Keys(f.Frequencies)) {
			v := f.Frequencies[k]
			fn("fault.frequencies."+k, &v)
		}
		fn("fault.shaft_hz", &f.ShaftHz)
		fn("fault.severity_db", &f.SeverityDB)
		fn("fault.resonance_hz", &f.ResonanceHz)
	}
	for _, k := range slices.Sorted(maps.Keys(e.Extra)) {
		if v, ok := e.Extra[k].(float64); ok {
			fn("extra."+k, &v)
		}
	}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
