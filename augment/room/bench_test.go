package room

import (
	"math/rand/v2"
	"testing"
)

// A 20 × 12 × 6 m hall with α = 0.1 at 16 kHz: Eyring 2.55 s; image
// part and diffuse tail.
func BenchmarkImpulseResponseHall(b *testing.B) {
	r := Room{Size: [3]float64{20, 12, 6}, Absorption: uniform(0.1), TemperatureC: 20}
	src, mic := [3]float64{3.1, 4.3, 1.4}, [3]float64{14.3, 8.1, 1.7}
	var dst []float64
	rng := rand.New(rand.NewPCG(1, 2))
	for b.Loop() {
		var err error
		if dst, err = ImpulseResponse(dst, r, src, mic, 16000, Config{}, rng); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(dst))/16000, "ir_s")
}

// The same hall, purely specular (images up to the full length, ~2·10⁶
// of them): the model before the diffuse tail, for comparison.
func BenchmarkImpulseResponseHallSpecular(b *testing.B) {
	r := Room{Size: [3]float64{20, 12, 6}, Absorption: uniform(0.1), TemperatureC: 20}
	src, mic := [3]float64{3.1, 4.3, 1.4}, [3]float64{14.3, 8.1, 1.7}
	var dst []float64
	for b.Loop() {
		var err error
		if dst, err = ImpulseResponse(dst, r, src, mic, 16000, Config{Specular: true, MaxSeconds: 4}, nil); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(len(dst))/16000, "ir_s")
}

func BenchmarkImpulseResponseHallOctave(b *testing.B) {
	oct := map[int][6]float64{}
	for i, hz := range OctaveBands() {
		oct[hz] = uniform(0.1 + 0.05*float64(i))
	}
	r := Room{Size: [3]float64{20, 12, 6}, Absorption: uniform(0.1), Octave: oct, TemperatureC: 20}
	src, mic := [3]float64{3.1, 4.3, 1.4}, [3]float64{14.3, 8.1, 1.7}
	var dst []float64
	rng := rand.New(rand.NewPCG(1, 2))
	for b.Loop() {
		var err error
		if dst, err = ImpulseResponse(dst, r, src, mic, 16000, Config{}, rng); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkImpulseResponseHallOctaveSpecular(b *testing.B) {
	oct := map[int][6]float64{}
	for i, hz := range OctaveBands() {
		oct[hz] = uniform(0.1 + 0.05*float64(i))
	}
	r := Room{Size: [3]float64{20, 12, 6}, Absorption: uniform(0.1), Octave: oct, TemperatureC: 20}
	src, mic := [3]float64{3.1, 4.3, 1.4}, [3]float64{14.3, 8.1, 1.7}
	var dst []float64
	for b.Loop() {
		var err error
		if dst, err = ImpulseResponse(dst, r, src, mic, 16000, Config{Specular: true, MaxSeconds: 4}, nil); err != nil {
			b.Fatal(err)
		}
	}
}

// A 10 s clip at 16 kHz through a 0.8 s IR.
func BenchmarkReverbApply(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	h := make([]float64, 12800)
	x := make([]float64, 160000)
	for i := range h {
		h[i] = rng.NormFloat64()
	}
	for i := range x {
		x[i] = rng.NormFloat64()
	}
	v := NewReverb(h, 16000)
	dst := make([]float64, len(x))
	for b.Loop() {
		v.Apply(dst, x, 16000)
	}
}
