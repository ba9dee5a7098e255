package features_test

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"

	"thrum/features"
)

func ExampleHTKMel() {
	// O'Shaughnessy 1987: 1000 Hz is about 1000 mel on the HTK scale.
	fmt.Printf("%.2f %.2f\n", features.HTKMel(1000), features.SlaneyMel(1000))
	// Output: 999.99 15.00
}

func ExampleLogMel_Compute() {
	const fs = 16000
	l, err := features.NewLogMel(features.Config{}, fs) // n_fft 1024, hop 512, 128 HTK bands
	if err != nil {
		panic(err)
	}
	x := make([]float64, fs) // 1 s of a 1 kHz sine at −20 dB re full scale
	for i := range x {
		x[i] = 0.1 * math.Sin(2*math.Pi*1000*float64(i)/fs)
	}
	out, frames := l.Compute(nil, x)
	row := out[10*l.Bands() : 11*l.Bands()]
	best := 0
	for b, v := range row {
		if v > row[best] {
			best = b
		}
	}
	fmt.Printf("%d frames × %d bands; loudest band %d at %.0f Hz, %.1f dB\n",
		frames, l.Bands(), best, l.Filterbank().CentreHz(best), row[best])
	// Output: 30 frames × 128 bands; loudest band 44 at 986 Hz, -20.7 dB
}

func ExampleMaskSpec_Apply() {
	feat := make([]float32, 100*64)
	m := features.MaskSpec{F: 8, MF: 2, T: 10, P: 0.2, MT: 1, Value: features.MaskZero}
	rec := m.Apply(feat, 100, 64, rand.New(rand.NewPCG(1, 2)))
	fmt.Println(len(rec.Freq), len(rec.Time), rec.Fraction <= 2*8.0/64+10.0/100)
	// Output: 2 1 true
}

func ExampleWriteNPY() {
	var buf bytes.Buffer
	if err := features.WriteNPY(&buf, []float32{1, 2, 3, 4, 5, 6}, 2, 3); err != nil {
		panic(err)
	}
	fmt.Printf("%d bytes, data at %d\n", buf.Len(), buf.Len()-24)
	// Output: 152 bytes, data at 128
}
