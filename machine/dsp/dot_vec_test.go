package dsp

import (
	"math/rand/v2"
	"testing"
)

// TestDotBitIdentical checks that the dot kernels (assembly where the CPU
// has it) give exactly the bits of the portable lane loops, for block
// counts from one to many and for the shared-row and paired forms.
func TestDotBitIdentical(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, 5000)
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	x32 := make([]float32, len(x))
	for i, v := range x {
		x32[i] = float32(v)
	}
	h := [4]*float64{&x[0], &x[100], &x[200], &x[300]}
	xs := [4]*float64{&x[7], &x[1000], &x[2001], &x[3333]}
	for _, n := range []int{8, 16, 104, 112, 1000} {
		var a, b [4]float64
		Dot4(&a, &h, &xs, n)
		dot4Lanes(&h, &xs, n, &b)
		if a != b {
			t.Errorf("n %d: Dot4 %v, portable %v", n, a, b)
		}
		hp := [4]*float64{&x[0], &x[100], &x[200], &x[300]}
		xp := [4]*float64{&x[7], &x[7], &x[2001], &x[2001]}
		Dot4p(&a, &hp, &xp, n)
		dot4Lanes(&hp, &xp, n, &b)
		if a != b {
			t.Errorf("n %d: Dot4p %v, portable %v", n, a, b)
		}
		if n%16 == 0 {
			Dot4s32(&a, &x32[5], &x32[50], 103, n)
			dot4s32Lanes(&x32[5], &x32[50], 103, n, &b)
			if a != b {
				t.Errorf("n %d: Dot4s32 %v, portable %v", n, a, b)
			}
		}
		Dot4s(&a, &x[5], &x[50], 103, n)
		hs := [4]*float64{&x[5], &x[5], &x[5], &x[5]}
		ws := [4]*float64{&x[50], &x[153], &x[256], &x[359]}
		dot4Lanes(&hs, &ws, n, &b)
		if a != b {
			t.Errorf("n %d: Dot4s %v, portable %v", n, a, b)
		}
	}
}
