package augment_test

import (
	"fmt"
	"math"

	"thrum/augment"
)

func ExampleNoiseGain() {
	// A unit-amplitude sine (mean square ½) over unit-variance noise at
	// 10 dB SNR.
	g := augment.NoiseGain(0.5, 1, 10)
	fmt.Printf("g = %.6f (%.4f dB)\n", g, 20*math.Log10(g))
	// Output: g = 0.223607 (-13.0103 dB)
}

func ExampleAWeightDB() {
	for _, f := range []float64{100, 1000, 10000} {
		fmt.Printf("%5.0f Hz: %+.1f dB\n", f, augment.AWeightDB(f))
	}
	// Output:
	//   100 Hz: -19.1 dB
	//  1000 Hz: +0.0 dB
	// 10000 Hz: -2.5 dB
}

func ExampleSpeed() {
	// Speeding a 1 s clip up by 3 % shortens it to round(16000/1.03).
	x := make([]float64, 16000)
	y := augment.Speed{Ratio: 1.03}.Apply(nil, x, 16000)
	fmt.Println(len(y))
	// Output: 15534
}
