package room

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

func uniform(a float64) [6]float64 { return [6]float64{a, a, a, a, a, a} }

func TestSpeedOfSound(t *testing.T) {
	for _, tc := range []struct{ tempC, want, tol float64 }{
		{20, 343.2, 0.05},  // ISO 17497-1:2004 Eq. (2) reference value
		{0, 331.3, 1e-12},  // the formula's constant: kinetic-gas result (common practice)
		{30, 349.0, 0.05},  // 331.3·sqrt(1 + 30/273.15), computed from the same formula
		{-10, 325.2, 0.05}, // computed from the same formula
	} {
		if got := SpeedOfSound(tc.tempC); math.Abs(got-tc.want) > tc.tol {
			t.Errorf("SpeedOfSound(%g) = %.4f, want %.4f ± %g", tc.tempC, got, tc.want, tc.tol)
		}
	}
}

func TestSabineEyring(t *testing.T) {
	// 10 × 8 × 3 m, V = 240 m³, S = 268 m²: Sabine T = 0.161·V/(S·ᾱ), Eyring
	// T = 0.161·V/(−S·ln(1−ᾱ)) (Sabine 1922; Eyring 1930), values computed
	// from those formulas with c = 343.2 m/s.
	for _, tc := range []struct {
		alpha, sabine, eyring float64
	}{
		{0.1, 1.442, 1.368},
		{0.2, 0.721, 0.646},
		{0.5, 0.288, 0.208},
	} {
		r := Room{Size: [3]float64{10, 8, 3}, Absorption: uniform(tc.alpha), TemperatureC: 20}
		if got := r.Sabine(); math.Abs(got-tc.sabine) > 0.0015 {
			t.Errorf("α=%g: Sabine %.4f, want %.3f", tc.alpha, got, tc.sabine)
		}
		if got := r.Eyring(); math.Abs(got-tc.eyring) > 0.0015 {
			t.Errorf("α=%g: Eyring %.4f, want %.3f", tc.alpha, got, tc.eyring)
		}
		// Fitzroy equals Eyring for uniform absorption (Fitzroy 1959, from memory).
		if got, want := r.Fitzroy(), r.Eyring(); math.Abs(got-want) > 1e-12*want {
			t.Errorf("α=%g: Fitzroy %.6f ≠ Eyring %.6f", tc.alpha, got, want)
		}
	}
	// Non-uniform: the area-weighted mean is what Sabine and Eyring see, and
	// Fitzroy is longer than Eyring (Jensen's inequality, derived).
	r := Room{Size: [3]float64{10, 8, 3}, Absorption: [6]float64{0.05, 0.05, 0.1, 0.1, 0.6, 0.6}, TemperatureC: 20}
	area := 2*8*3*0.05 + 2*10*3*0.1 + 2*10*8*0.6
	if got, want := r.Sabine(), 24*math.Ln10/343.2*240/area; math.Abs(got-want) > 1e-3*want {
		t.Errorf("non-uniform Sabine %.4f, want %.4f", got, want)
	}
	if !(r.Fitzroy() > 1.2*r.Eyring()) {
		t.Errorf("non-uniform Fitzroy %.3f not well above Eyring %.3f", r.Fitzroy(), r.Eyring())
	}
	if !math.IsInf(Room{Size: [3]float64{1, 1, 1}, TemperatureC: 20}.Eyring(), 1) {
		t.Error("rigid room: Eyring not +Inf")
	}
}

func TestValidate(t *testing.T) {
	good := Room{Size: [3]float64{5, 4, 3}, Absorption: uniform(0.2), TemperatureC: 20,
		Octave: map[int][6]float64{125: uniform(0.1), 4000: uniform(0.5)}}
	if err := good.Validate(); err != nil {
		t.Fatalf("good room: %v", err)
	}
	for _, tc := range []struct {
		name string
		mod  func(*Room)
		want string
	}{
		{"zero size", func(r *Room) { r.Size[1] = 0 }, "size[1]"},
		{"negative size", func(r *Room) { r.Size[0] = -1 }, "size[0]"},
		{"inf size", func(r *Room) { r.Size[2] = math.Inf(1) }, "size[2]"},
		{"alpha 1", func(r *Room) { r.Absorption[3] = 1 }, "absorption[3]"},
		{"alpha negative", func(r *Room) { r.Absorption[0] = -0.1 }, "absorption[0]"},
		{"alpha NaN", func(r *Room) { r.Absorption[5] = math.NaN() }, "absorption[5]"},
		{"band key", func(r *Room) { r.Octave = map[int][6]float64{300: uniform(0.1)} }, "300 Hz"},
		{"band alpha", func(r *Room) { r.Octave = map[int][6]float64{500: {0, 0, 0, 0, 0, 1.5}} }, "octave[500][5]"},
		{"cold", func(r *Room) { r.TemperatureC = -60 }, "temperature"},
		{"hot", func(r *Room) { r.TemperatureC = 90 }, "temperature"},
	} {
		r := good
		r.Octave = map[int][6]float64{125: uniform(0.1)}
		tc.mod(&r)
		err := r.Validate()
		if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.HasPrefix(err.Error(), "room: ") {
			t.Errorf("%s: error %v, want one naming %q", tc.name, err, tc.want)
		}
	}
}

func TestDrawPoint(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	lo, hi := [3]float64{1, 2, 0.5}, [3]float64{3, 2, 1.5} // y degenerate
	var mean [3]float64
	const n = 20000
	for i := 0; i < n; i++ {
		p := DrawPoint(rng, lo, hi)
		for a := range p {
			if p[a] < lo[a] || p[a] > hi[a] {
				t.Fatalf("point %v outside box %v…%v", p, lo, hi)
			}
			mean[a] += p[a] / n
		}
	}
	// Uniform: mean at the centre, standard error (hi−lo)/sqrt(12n) ≈ 0.004.
	for a := range mean {
		if c := (lo[a] + hi[a]) / 2; math.Abs(mean[a]-c) > 0.02 {
			t.Errorf("axis %d mean %.4f, want %.4f", a, mean[a], c)
		}
	}
	// Same seed, same points.
	a := DrawPoint(rand.New(rand.NewPCG(1, 2)), lo, hi)
	b := DrawPoint(rand.New(rand.NewPCG(1, 2)), lo, hi)
	if a != b {
		t.Errorf("not deterministic: %v vs %v", a, b)
	}
	defer func() {
		if recover() == nil {
			t.Error("inverted box did not panic")
		}
	}()
	DrawPoint(rng, hi, lo)
}
