package augment

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// Benchmarks at 1 s, 10 s and 60 s of 16 kHz audio, dst reused.
var benchSeconds = []int{1, 10, 60}

const benchFS = 16000.0

func benchTransform(b *testing.B, mk func() Transform) {
	for _, sec := range benchSeconds {
		x := randn(sec*int(benchFS), 1)
		for i := range x {
			x[i] *= 0.1
		}
		b.Run(fmt.Sprintf("%ds", sec), func(b *testing.B) {
			tr := mk()
			dst := tr.Apply(nil, x, benchFS)
			b.ReportAllocs()
			b.SetBytes(int64(8 * len(x)))
			for b.Loop() {
				dst = tr.Apply(dst[:0], x, benchFS)
			}
		})
	}
}

// BenchmarkResampler is the hot path: a cached plan, r = 1.03 (exact
// phases), and an irrational-looking ratio on the interpolated table.
func BenchmarkResampler(b *testing.B) {
	for _, r := range []float64{1.03, 1.0317} {
		rs := NewResampler(r)
		for _, sec := range benchSeconds {
			x := randn(sec*int(benchFS), 1)
			dst := rs.Apply(nil, x)
			b.Run(fmt.Sprintf("r%v/%ds", r, sec), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					dst = rs.Apply(dst, x)
				}
			})
		}
	}
}

func BenchmarkNewResampler(b *testing.B) {
	b.ReportAllocs()
	for b.Loop() {
		NewResampler(1.03)
	}
}

func BenchmarkSpeed(b *testing.B) {
	var p Plans
	benchTransform(b, func() Transform { return Speed{Ratio: 1.03, Plans: &p} })
}

func BenchmarkGain(b *testing.B)   { benchTransform(b, func() Transform { return Gain{DB: -3} }) }
func BenchmarkInvert(b *testing.B) { benchTransform(b, func() Transform { return Invert{} }) }
func BenchmarkShift(b *testing.B) {
	benchTransform(b, func() Transform { return Shift{Seconds: 0.123, Circular: true} })
}
func BenchmarkFilterRBJ(b *testing.B) {
	benchTransform(b, func() Transform { return Filter{Type: "lowpass", High: 2000} })
}
func BenchmarkFilterTelephone(b *testing.B) {
	benchTransform(b, func() Transform { return Filter{Type: "telephone"} })
}

func BenchmarkNoise(b *testing.B) {
	for _, c := range []string{White, Pink, Brown} {
		b.Run(c, func(b *testing.B) {
			benchTransform(b, func() Transform {
				return Noise{Colour: c, SNR: 10, Rand: rand.New(rand.NewPCG(1, 2))}
			})
		})
	}
}

func BenchmarkNoiseAWeighted(b *testing.B) {
	benchTransform(b, func() Transform {
		return Noise{Colour: White, SNR: 10, Weighting: WeightA, Rand: rand.New(rand.NewPCG(1, 2))}
	})
}

func BenchmarkBackground(b *testing.B) {
	src := SynthPlantNoise(make([]float64, 5*int(benchFS)), benchFS, rand.New(rand.NewPCG(1, 2)))
	benchTransform(b, func() Transform {
		return Background{Source: src, SNR: 6, Offset: 1000, CrossfadeSeconds: 0.25}
	})
}

func BenchmarkSynthPlantNoise(b *testing.B) {
	for _, sec := range benchSeconds {
		dst := make([]float64, sec*int(benchFS))
		rng := rand.New(rand.NewPCG(1, 2))
		b.Run(fmt.Sprintf("%ds", sec), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				SynthPlantNoise(dst, benchFS, rng)
			}
		})
	}
}

func BenchmarkTempo(b *testing.B) { benchTransform(b, func() Transform { return Tempo{Factor: 1.05} }) }
func BenchmarkPitch(b *testing.B) { benchTransform(b, func() Transform { return Pitch{Cents: 50} }) }

func BenchmarkPowerA(b *testing.B) {
	for _, sec := range benchSeconds {
		x := randn(sec*int(benchFS), 1)
		b.Run(fmt.Sprintf("%ds", sec), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				Power(x, benchFS, WeightA)
			}
		})
	}
}

// BenchmarkSpeedModes compares the two speed modes on one 10 s clip of a
// synthetic machine at 16 kHz (16 orders of 24.7 Hz, a resonance, a mains
// line, a floor): the order-aware change should cost at most 5× the
// resampling.
func BenchmarkSpeedModes(b *testing.B) {
	tm := testMachine{fs: benchFS, seconds: 10, shaftHz: 24.7, orders: 16, resHz: 1500, mainsLineHz: 100}
	x := tm.signal()
	var p Plans
	modes := []struct {
		name string
		tr   Transform
	}{
		{"resample", Speed{Ratio: 1.02, Plans: &p}},
		{"orders", OrderSpeed{Ratio: 1.02, ShaftHz: 24.7, BandPercent: 2.5, MainsHz: 50, LevelDB: SoundPowerLevelDB(5, 1.02)}},
	}
	for _, m := range modes {
		b.Run(m.name+"/10s", func(b *testing.B) {
			dst := m.tr.Apply(nil, x, benchFS)
			b.ReportAllocs()
			b.SetBytes(int64(8 * len(x)))
			for b.Loop() {
				dst = m.tr.Apply(dst[:0], x, benchFS)
			}
		})
	}
}
