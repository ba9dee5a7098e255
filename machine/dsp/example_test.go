package dsp_test

import (
	"fmt"
	"math"
	"math/cmplx"

	"thrum/machine/dsp"
)

// A unit cosine at bin 3 of a 16-point transform lands in bin 3 with
// magnitude n/2 = 8.
func ExampleRealFFT_Forward() {
	const n = 16
	x := make([]float64, n)
	for t := range x {
		x[t] = math.Cos(2 * math.Pi * 3 * float64(t) / n)
	}
	X := dsp.NewRealFFT(n).Forward(nil, x)
	for k, v := range X {
		if m := cmplx.Abs(v); m > 1e-9 {
			fmt.Printf("bin %d: %.6f\n", k, m)
		}
	}
	// Output:
	// bin 3: 8.000000
}

// A two-tap moving sum: each output is the sample plus its predecessor.
func ExampleConvolver_Apply() {
	c := dsp.NewConvolver([]float64{1, 1})
	fmt.Println(c.Apply(nil, []float64{1, 2, 3, 4}))
	fmt.Println(c.ApplyFull(nil, []float64{1, 2, 3, 4}))
	// Output:
	// [1 3 5 7]
	// [1 3 5 7 4]
}
