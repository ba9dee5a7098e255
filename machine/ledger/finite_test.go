package ledger

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
)

// A non-finite float never reaches a line: Encode refuses it naming the
// machine, the line and the field, and Defined turns it into an undefined
// value with its reason, which encodes and reads back.
func TestNonFiniteValues(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	cases := []struct {
		name  string
		edit  func(e *Entry)
		field string
		where string
	}{
		{"step param", func(e *Entry) { e.Steps[0].Params["measured_snr_db"] = nan }, "steps[0].params.measured_snr_db", "pump/nominal/a-c0-v1.wav"},
		{"later step", func(e *Entry) {
			e.Steps = append(e.Steps, StepRecord{Kind: "room", Params: map[string]float64{"rt60_s": inf}})
		}, "steps[3].params.rt60_s", "pump/nominal/a-c0-v1.wav"},
		{"scale", func(e *Entry) { e.Scale = -inf }, "scale", "pump/nominal/a-c0-v1.wav"},
		{"speed", func(e *Entry) { e.Speed = nan }, "speed", "pump/nominal/a-c0-v1.wav"},
		{"fault", func(e *Entry) {
			e.Fault = &FaultRecord{Kind: "imbalance", Frequencies: map[string]float64{"shaft": inf}}
		}, "fault.frequencies.shaft", "pump/nominal/a-c0-v1.wav"},
		{"extra", func(e *Entry) { e.Extra = map[string]any{"level": nan} }, "extra.level", "pump/nominal/a-c0-v1.wav"},
		{"rejected line", func(e *Entry) { e.Path, e.Kind, e.Clip, e.Scale = "", KindRejected, 3, nan }, "scale", "pump/nominal/a.wav clip 3 variant 1"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e := sample()[1]
			c.edit(&e)
			var buf bytes.Buffer
			err := Encode(&buf, []Entry{sample()[0], e})
			var ve *ValueError
			if !errors.As(err, &ve) || ve.Machine != "pump" || ve.Field != c.field || ve.Path != c.where {
				t.Fatalf("Encode: %v; want a *ValueError for machine pump, %s, %s", err, c.where, c.field)
			}
			for _, want := range []string{"pump", c.where, c.field} {
				if !strings.Contains(err.Error(), want) {
					t.Errorf("%q lacks %q", err, want)
				}
			}
			if buf.Len() != 0 {
				t.Errorf("Encode wrote %d bytes before failing", buf.Len())
			}
			d := Defined(e, "not measurable")
			if err := Check(&d); err != nil {
				t.Fatalf("Defined left %v", err)
			}
			buf.Reset()
			if err := Encode(&buf, []Entry{d}); err != nil {
				t.Fatal(err)
			}
			got, err := Read(&buf, "x.jsonl")
			if err != nil || len(got) != 1 {
				t.Fatalf("read back: %v", err)
			}
			why := got[0].Undefined[c.field]
			if i := strings.Index(c.field, ".params."); i >= 0 {
				var step int
				for k := range got[0].Steps {
					if strings.HasPrefix(c.field, "steps["+string(rune('0'+k))+"]") {
						step = k
					}
				}
				key := c.field[i+len(".params."):]
				why = got[0].Steps[step].Undefined[key]
				if _, ok := got[0].Steps[step].Params[key]; ok {
					t.Errorf("%s still in params", key)
				}
			}
			if !strings.HasPrefix(why, "not measurable") {
				t.Errorf("undefined reason for %s = %q in %+v", c.field, why, got[0])
			}
		})
	}
	// a line with only finite values is left as it is
	e := sample()[1]
	var a, b bytes.Buffer
	must(t, Encode(&a, []Entry{e}))
	must(t, Encode(&b, []Entry{Defined(e, "x")}))
	if a.String() != b.String() || strings.Contains(a.String(), "undefined") {
		t.Errorf("Defined changed a finite line:\n%s%s", a.String(), b.String())
	}
}
