package augment

import (
	"math"
	"testing"
)

func TestGainInvert(t *testing.T) {
	x := []float64{0.25, -0.5, 0}
	// +6.0206 dB = 20·log10 2 doubles the amplitude (definition of the dB).
	y := Gain{DB: 20 * math.Log10(2)}.Apply(nil, x, 16000)
	for i := range x {
		if math.Abs(y[i]-2*x[i]) > 1e-15 {
			t.Errorf("gain: %v", y)
		}
	}
	z := Invert{}.Apply(nil, x, 16000)
	for i := range x {
		if z[i] != -x[i] {
			t.Errorf("invert: %v", z)
		}
	}
}

func TestShift(t *testing.T) {
	x := []float64{1, 2, 3, 4, 5}
	for _, c := range []struct {
		s    Shift
		want []float64
	}{
		{Shift{Seconds: 2}, []float64{0, 0, 1, 2, 3}},
		{Shift{Seconds: -2}, []float64{3, 4, 5, 0, 0}},
		{Shift{Seconds: 2, Circular: true}, []float64{4, 5, 1, 2, 3}},
		{Shift{Seconds: -2, Circular: true}, []float64{3, 4, 5, 1, 2}},
		{Shift{Seconds: 7, Circular: true}, []float64{4, 5, 1, 2, 3}},
		{Shift{Seconds: 9}, []float64{0, 0, 0, 0, 0}},
		{Shift{Seconds: 1.4}, []float64{0, 1, 2, 3, 4}},
	} {
		got := c.s.Apply(make([]float64, 0, 5), x, 1)
		for i := range got {
			if got[i] != c.want[i] {
				t.Errorf("%+v: %v, want %v", c.s, got, c.want)
				break
			}
		}
	}
}
