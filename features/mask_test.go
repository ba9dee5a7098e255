package features

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestMaskBounds(t *testing.T) {
	rng := rand.New(rand.NewPCG(2019, 1))
	specs := []MaskSpec{
		// Policy LB of Park et al. 2019, Table 1 (from memory): F 27, m_F 1,
		// T 100, p 1.0, m_T 1.
		{F: 27, MF: 1, T: 100, P: 1, MT: 1},
		// Policy SM, same table (from memory): F 15, m_F 2, T 70, p 0.2, m_T 2.
		{F: 15, MF: 2, T: 70, P: 0.2, MT: 2},
		{F: 200, MF: 3, T: 5, MT: 4, Value: MaskZero},
		{F: 0, MF: 2, T: 0, MT: 2},
		{},
	}
	for _, m := range specs {
		for trial := range 30 {
			frames, bands := 1+rng.IntN(400), 1+rng.IntN(160)
			x := make([]float32, frames*bands)
			for i := range x {
				x[i] = float32(rng.NormFloat64()*5 - 40)
			}
			orig := append([]float32(nil), x...)
			rec := m.Apply(x, frames, bands, rng)
			if len(rec.Freq) != m.MF || len(rec.Time) != m.MT {
				t.Fatalf("%+v: %d freq and %d time masks", m, len(rec.Freq), len(rec.Time))
			}
			p := m.P
			if p == 0 {
				p = 1
			}
			for _, s := range rec.Freq {
				if s.Start < 0 || s.Width < 0 || s.Width > m.F || s.Start+s.Width > bands {
					t.Fatalf("%+v trial %d: freq mask %+v outside %d bands", m, trial, s, bands)
				}
			}
			for _, s := range rec.Time {
				if s.Start < 0 || s.Width < 0 || s.Width > m.T || float64(s.Width) > p*float64(frames) || s.Start+s.Width > frames {
					t.Fatalf("%+v trial %d: time mask %+v outside %d frames", m, trial, s, frames)
				}
			}
			masked := 0
			for i := range frames {
				for b := range bands {
					in := false
					for _, s := range rec.Time {
						in = in || (i >= s.Start && i < s.Start+s.Width)
					}
					for _, s := range rec.Freq {
						in = in || (b >= s.Start && b < s.Start+s.Width)
					}
					v := x[i*bands+b]
					if in {
						masked++
						if v != rec.Value {
							t.Fatalf("masked cell %d,%d = %v, want %v", i, b, v, rec.Value)
						}
					} else if v != orig[i*bands+b] {
						t.Fatalf("unmasked cell %d,%d changed", i, b)
					}
				}
			}
			frac := float64(masked) / float64(frames*bands)
			if math.Abs(frac-rec.Fraction) > 1e-12 {
				t.Fatalf("record says %v masked, counted %v", rec.Fraction, frac)
			}
			// Bound from Park et al. 2019, Sec. 2: each frequency mask covers
			// at most F of ν channels, each time mask at most min(T, pτ) of τ
			// steps.
			bound := float64(m.MF*m.F)/float64(bands) + float64(m.MT)*math.Min(float64(m.T), p*float64(frames))/float64(frames)
			if frac > bound+1e-12 {
				t.Fatalf("%+v: masked fraction %v above bound %v", m, frac, bound)
			}
			if m.Value == MaskZero && rec.Value != 0 {
				t.Fatalf("zero mask value %v", rec.Value)
			}
		}
	}
}

func TestMaskDeterministicAndMean(t *testing.T) {
	m := MaskSpec{F: 20, MF: 2, T: 30, P: 0.5, MT: 2}
	make2 := func() ([]float32, MaskRecord) {
		x := make([]float32, 100*64)
		for i := range x {
			x[i] = float32(i % 7)
		}
		rec := m.Apply(x, 100, 64, rand.New(rand.NewPCG(5, 6)))
		return x, rec
	}
	a, ra := make2()
	b, rb := make2()
	for i := range a {
		if a[i] != b[i] {
			t.Fatal("same seed, different masks")
		}
	}
	if len(ra.Freq) != len(rb.Freq) || ra.Freq[0] != rb.Freq[0] || ra.Time[1] != rb.Time[1] {
		t.Fatal("same seed, different records")
	}
	// The mean fill is the mean of the array before masking.
	var sum float64
	for i := range 100 * 64 {
		sum += float64(i % 7)
	}
	if want := float32(sum / 6400); ra.Value != want {
		t.Errorf("mean fill %v, want %v", ra.Value, want)
	}
}

func TestMaskInvalid(t *testing.T) {
	bad := []MaskSpec{{F: -1}, {MF: -1}, {T: -2}, {MT: -1}, {P: 1.5}, {P: -0.1}, {Value: "noise"}, {P: math.NaN()}}
	for _, m := range bad {
		if m.Validate() == nil {
			t.Errorf("%+v accepted", m)
		}
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%+v: Apply did not panic", m)
				}
			}()
			m.Apply(make([]float32, 4), 2, 2, rand.New(rand.NewPCG(1, 1)))
		}()
	}
	func() {
		defer func() {
			if recover() == nil {
				t.Error("short array: no panic")
			}
		}()
		MaskSpec{}.Apply(make([]float32, 3), 2, 2, rand.New(rand.NewPCG(1, 1)))
	}()
}

func BenchmarkMask(b *testing.B) {
	const frames, bands = 313, 128
	x := make([]float32, frames*bands)
	rng := rand.New(rand.NewPCG(1, 2))
	m := MaskSpec{F: 27, MF: 2, T: 40, P: 0.2, MT: 2}
	b.ReportAllocs()
	for b.Loop() {
		m.Apply(x, frames, bands, rng)
	}
}
