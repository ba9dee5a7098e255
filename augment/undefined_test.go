package augment

import (
	"math"
	"strings"
	"testing"
)

// An SNR that has no value is reported with its cause, never as NaN or
// an infinity.
func TestMeasuredSNRUndefined(t *testing.T) {
	tone := make([]float64, 1600)
	for i := range tone {
		tone[i] = 0.1 * math.Sin(2*math.Pi*float64(i)/32)
	}
	plus := func(x []float64, d float64) []float64 {
		y := make([]float64, len(x))
		for i := range x {
			y[i] = x[i] + d*math.Cos(float64(i))
		}
		return y
	}
	silent := make([]float64, 1600)
	cases := []struct {
		name    string
		in, out []float64
		why     string // "" = defined
	}{
		{"mix", tone, plus(tone, 0.01), ""},
		{"silent clip", silent, plus(silent, 0.01), "the clip is silent"},
		{"nothing added", tone, append([]float64(nil), tone...), "nothing was added"},
		{"silent clip, nothing added", silent, silent, "the clip is silent"},
	}
	for _, c := range cases {
		for _, w := range []Weighting{WeightNone, WeightA} {
			got, why := measuredSNR(c.in, c.out, 16000, w)
			if c.why == "" {
				if why != "" || math.IsNaN(got) || math.IsInf(got, 0) {
					t.Errorf("%s (weighting %v): %v, %q; want a finite SNR", c.name, w, got, why)
				}
				continue
			}
			if !strings.Contains(why, c.why) || got != 0 {
				t.Errorf("%s (weighting %v): %v, %q; want 0 and %q", c.name, w, got, why, c.why)
			}
		}
	}
}
