package room

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// For h(t) = e^(−t/τ)·noise the energy decays as e^(−2t/τ), the Schroeder
// curve is a line and T60 = 3·ln(10)·τ = 6.9078·τ; T20, T30 and EDT must
// all return it (Schroeder 1965; ISO 3382-1:2009 definitions).
func TestDecayAnalytic(t *testing.T) {
	const fs = 16000.0
	for _, tc := range []struct {
		tau  float64
		seed uint64
	}{
		{0.05, 1},
		{0.1, 2},
		{0.3, 3},
	} {
		rng := rand.New(rand.NewPCG(tc.seed, 99))
		n := int(16 * tc.tau * fs) // 139 dB of decay
		h := make([]float64, n)
		for i := range h {
			h[i] = math.Exp(-float64(i)/fs/tc.tau) * rng.NormFloat64()
		}
		want := 6.9078 * tc.tau
		for _, m := range []struct {
			name string
			f    func([]float64, float64) (float64, error)
			tol  float64
		}{
			// The tail energy at a level has about τ·fs/2 independent
			// samples (400 at τ = 0.05 s, ~0.3 dB of scatter), so allow 3 %;
			// EDT spans the fewest samples, so allow 5 %.
			{"T20", T20, 0.03}, {"T30", T30, 0.03}, {"EDT", EDT, 0.05},
		} {
			got, err := m.f(h, fs)
			if err != nil {
				t.Fatalf("τ=%g %s: %v", tc.tau, m.name, err)
			}
			if math.Abs(got-want) > m.tol*want {
				t.Errorf("τ=%g: %s = %.4f s, want 6.9078·τ = %.4f s ±%g%%", tc.tau, m.name, got, want, 100*m.tol)
			}
		}
	}
}

func TestEDC(t *testing.T) {
	h := []float64{0, 2, 0, 1, 1, 0}
	got := EDC(nil, h)
	// Σh² = 6: tails 6, 6, 2, 2, 1, 0.
	want := []float64{0, 0, 10 * math.Log10(2.0/6), 10 * math.Log10(2.0/6), 10 * math.Log10(1.0/6), math.Inf(-1)}
	for i := range want {
		if !(math.Abs(got[i]-want[i]) < 1e-12 || got[i] == want[i]) {
			t.Errorf("EDC[%d] = %g, want %g", i, got[i], want[i])
		}
	}
	if z := EDC(nil, []float64{0, 0}); !math.IsNaN(z[0]) {
		t.Errorf("EDC of silence = %v, want NaN", z)
	}
}

func TestDecayTimeErrors(t *testing.T) {
	short := make([]float64, 200)
	for i := range short {
		short[i] = math.Exp(-float64(i) / 100) // 8.7 dB of energy decay
	}
	for _, tc := range []struct {
		name     string
		h        []float64
		fs       float64
		from, to float64
		want     string
	}{
		{"empty", nil, 16000, -5, -25, "empty"},
		{"silent", make([]float64, 10), 16000, -5, -25, "no energy"},
		{"short range", short, 16000, -5, -25, "ends"},
		{"never reaches", []float64{1, 0.9}, 16000, -5, -25, "reaches only"},
		{"bad range", short, 16000, -25, -5, "decay range"},
		{"positive from", short, 16000, 3, -5, "decay range"},
		{"bad fs", short, 0, -5, -25, "sampling rate"},
	} {
		_, err := DecayTime(tc.h, tc.fs, tc.from, tc.to)
		if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.HasPrefix(err.Error(), "room: ") {
			t.Errorf("%s: error %v, want one mentioning %q", tc.name, err, tc.want)
		}
	}
}
