package augment

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"slices"
	"testing"

	"thrum/machine/dsp"
)

// testMachine is a synthetic machine: shaft orders 1…orders at shaftHz
// (amplitudes falling as 1/√k, fixed phases), a structural resonance at
// resHz (white noise through a two-pole resonator of Q 12), a mains line
// at mainsLineHz and a white noise floor.
type testMachine struct {
	fs, seconds, shaftHz float64
	orders               int
	resHz, mainsLineHz   float64
}

func (tm testMachine) parts() (orders, rest []float64) {
	n := int(tm.fs * tm.seconds)
	orders = make([]float64, n)
	rest = make([]float64, n)
	rng := rand.New(rand.NewPCG(7, 11))
	for k := 1; k <= tm.orders; k++ {
		a, ph := 0.1/math.Sqrt(float64(k)), 2*math.Pi*rng.Float64()
		w := 2 * math.Pi * float64(k) * tm.shaftHz / tm.fs
		for i := range orders {
			orders[i] += a * math.Cos(w*float64(i)+ph)
		}
	}
	// resonator: poles at radius ρ, angle θ (bandwidth f/Q)
	th := 2 * math.Pi * tm.resHz / tm.fs
	rho := math.Exp(-math.Pi * tm.resHz / 12 / tm.fs)
	a1, a2 := -2*rho*math.Cos(th), rho*rho
	var y1, y2 float64
	for i := range rest {
		e := rng.NormFloat64()
		y := 0.02*e - a1*y1 - a2*y2
		y2, y1 = y1, y
		rest[i] = y + 0.003*rng.NormFloat64() + 0.05*math.Sin(2*math.Pi*tm.mainsLineHz*float64(i)/tm.fs)
	}
	return orders, rest
}

func (tm testMachine) signal() []float64 {
	o, r := tm.parts()
	for i := range o {
		o[i] += r[i]
	}
	return o
}

// lineHz is the frequency of the strongest line within ±hw of guess: the
// maximum of the Hann-windowed DTFT, from a grid then a golden-section
// search.
func lineHz(x []float64, fs, guess, hw float64) float64 {
	n := len(x)
	wx := make([]float64, n)
	for i, v := range x {
		wx[i] = v * (0.5 - 0.5*math.Cos(2*math.Pi*(float64(i)+0.5)/float64(n)))
	}
	mag := func(f float64) float64 {
		rot := cmplx.Exp(complex(0, -2*math.Pi*f/fs))
		p := complex(1, 0)
		var acc complex128
		for _, v := range wx {
			acc += complex(v, 0) * p
			p *= rot
		}
		return cmplx.Abs(acc)
	}
	const grid = 80
	best, bm := guess, -1.0
	for i := 0; i <= grid; i++ {
		f := guess - hw + 2*hw*float64(i)/grid
		if m := mag(f); m > bm {
			best, bm = f, m
		}
	}
	a, b := best-2*hw/grid, best+2*hw/grid
	g := (math.Sqrt(5) - 1) / 2
	c, d := b-g*(b-a), a+g*(b-a)
	mc, md := mag(c), mag(d)
	for b-a > 1e-6 {
		if mc > md {
			b, d, md = d, c, mc
			c = b - g*(b-a)
			mc = mag(c)
		} else {
			a, c, mc = c, d, md
			d = a + g*(b-a)
			md = mag(d)
		}
	}
	return (a + b) / 2
}

// resonanceHz is the centre of the strongest broad peak in [lo, hi]: the
// maximum of a Welch power spectrum (Hann, 2048 points, half overlap)
// smoothed over ±5 bins, refined by a parabola.
func resonanceHz(x []float64, fs, lo, hi float64) float64 {
	const n = 2048
	fft := dsp.NewRealFFT(n)
	psd := make([]float64, n/2+1)
	seg := make([]float64, n)
	for s := 0; s+n <= len(x); s += n / 2 {
		for i := range seg {
			seg[i] = x[s+i] * (0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/n))
		}
		p := fft.PowerSpectrum(nil, seg)
		for i := range psd {
			psd[i] += p[i]
		}
	}
	sm := make([]float64, len(psd))
	for i := range sm {
		for j := max(0, i-5); j <= min(len(psd)-1, i+5); j++ {
			sm[i] += psd[j]
		}
	}
	best := 0
	for i := int(lo / fs * n); i <= int(hi/fs*n); i++ {
		if best == 0 || sm[i] > sm[best] {
			best = i
		}
	}
	a, b, c := sm[best-1], sm[best], sm[best+1]
	return (float64(best) + 0.5*(a-c)/(a-2*b+c)) * fs / n
}

func rmsDB(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v * v
	}
	return 10 * math.Log10(s/float64(len(x)))
}

// TestOrderSpeedSyntheticMachine checks the order-aware speed change on a
// machine of known parts: every order line at r·k·f within 0.02 %, the
// resonance centre within 1 %, the mains line within 0.01 Hz, the length
// unchanged and the level within 0.5 dB of the fan law (sound power ∝
// speed⁵: +50·log10 r dB; the fan laws, ASHRAE Handbook—HVAC Systems and
// Equipment, Fans chapter, from memory).
func TestOrderSpeedSyntheticMachine(t *testing.T) {
	tm := testMachine{fs: 16000, seconds: 4, shaftHz: 23.7, orders: 8, resHz: 1500, mainsLineHz: 100}
	x := tm.signal()
	for _, r := range []float64{0.9, 0.97, 1.03, 1.1} {
		law := SoundPowerLevelDB(5, r)
		y, rep := OrderSpeed{Ratio: r, ShaftHz: 24, BandPercent: 3, Orders: 8, MainsHz: 50, LevelDB: law}.ApplyReport(nil, x, tm.fs)
		if len(y) != len(x) {
			t.Fatalf("r %g: %d samples out, %d in", r, len(y), len(x))
		}
		if math.Abs(rep.ShaftHz-tm.shaftHz) > 0.01 {
			t.Errorf("r %g: tracked shaft %.4f Hz, want %.4f", r, rep.ShaftHz, tm.shaftHz)
		}
		if len(rep.Moved) != tm.orders {
			t.Errorf("r %g: moved orders %v, kept for mains %v", r, rep.Moved, rep.KeptMains)
		}
		for k := 1; k <= tm.orders; k++ {
			want := r * float64(k) * tm.shaftHz
			got := lineHz(y, tm.fs, want, 1)
			if rel := math.Abs(got/want - 1); rel > 2e-4 {
				t.Errorf("r %g: order %d at %.4f Hz, want %.4f (off %.3f %%)", r, k, got, want, 100*rel)
			}
		}
		if got := lineHz(y, tm.fs, tm.mainsLineHz, 1.5); math.Abs(got-tm.mainsLineHz) > 0.01 {
			t.Errorf("r %g: mains line at %.4f Hz, want %.4f", r, got, tm.mainsLineHz)
		}
		if got := resonanceHz(y, tm.fs, 1000, 2200); math.Abs(got/tm.resHz-1) > 0.01 {
			t.Errorf("r %g: resonance centre %.1f Hz, want %.1f within 1 %%", r, got, tm.resHz)
		}
		if got := rmsDB(y) - rmsDB(x); math.Abs(got-law) > 0.5 {
			t.Errorf("r %g: level change %.2f dB, fan law %.2f dB", r, got, law)
		}
	}
}

// TestOrderSpeedRemovesOldOrders: after the change nothing is left at the
// old order frequencies. The rest is the mains line alone here: noise
// inside an order's band is moved with the order, which would read as a
// residual of the noise's level.
func TestOrderSpeedRemovesOldOrders(t *testing.T) {
	tm := testMachine{fs: 16000, seconds: 4, shaftHz: 23.7, orders: 8, resHz: 1500, mainsLineHz: 100}
	orders, _ := tm.parts()
	rest := make([]float64, len(orders))
	x := make([]float64, len(orders))
	for i := range x {
		rest[i] = 0.05 * math.Sin(2*math.Pi*tm.mainsLineHz*float64(i)/tm.fs)
		x[i] = orders[i] + rest[i]
	}
	y := OrderSpeed{Ratio: 1.05, ShaftHz: 24, BandPercent: 3, Orders: 8, MainsHz: 50}.Apply(nil, x, tm.fs)
	// y minus the untouched rest is what the orders became: its level at
	// each old order frequency must be far below the order's own.
	d := make([]float64, len(y))
	for i := range d {
		d[i] = y[i] - rest[i]
	}
	for k := 1; k <= tm.orders; k++ {
		f := float64(k) * tm.shaftHz
		before, after := toneAmp(orders, tm.fs, f), toneAmp(d, tm.fs, f)
		if after > before*0.001 {
			t.Errorf("order %d: %.2g left at %.2f Hz of %.2g (want < 0.1 %%)", k, after, f, before)
		}
	}
}

// toneAmp is the amplitude of x at exactly f: the DTFT with a 4-term
// Blackman–Harris window (sidelobes below −92 dB; Harris 1978), so lines
// a few bins away do not leak into it.
func toneAmp(x []float64, fs, f float64) float64 {
	rot := cmplx.Exp(complex(0, -2*math.Pi*f/fs))
	p := complex(1, 0)
	var acc complex128
	var sw float64
	for i, v := range x {
		a := 2 * math.Pi * (float64(i) + 0.5) / float64(len(x))
		w := 0.35875 - 0.48829*math.Cos(a) + 0.14128*math.Cos(2*a) - 0.01168*math.Cos(3*a)
		acc += complex(v*w, 0) * p
		sw += w
		p *= rot
	}
	return 2 * cmplx.Abs(acc) / sw
}

// TestOrderSpeedKeepsMainsOrders: an order on a mains harmonic (order 4 of
// 25 Hz at 100 Hz, mains 50 Hz) stays, the others move.
func TestOrderSpeedKeepsMainsOrders(t *testing.T) {
	tm := testMachine{fs: 16000, seconds: 4, shaftHz: 25, orders: 6, resHz: 1500, mainsLineHz: 100}
	x := tm.signal()
	y, rep := OrderSpeed{Ratio: 1.04, ShaftHz: 25, BandPercent: 2, Orders: 6, MainsHz: 50}.ApplyReport(nil, x, tm.fs)
	if !slices.Equal(rep.KeptMains, []int{2, 4, 6}) {
		t.Errorf("kept for mains %v, want [2 4 6] (50, 100 and 150 Hz)", rep.KeptMains)
	}
	if got := lineHz(y, tm.fs, 100, 1.5); math.Abs(got-100) > 0.01 {
		t.Errorf("line at 100 Hz moved to %.4f Hz", got)
	}
	if got, want := lineHz(y, tm.fs, 3*25*1.04, 1), 3*25*1.04; math.Abs(got/want-1) > 2e-4 {
		t.Errorf("order 3 at %.4f Hz, want %.4f", got, want)
	}
}

// TestOrderSpeedTracksDrift: a shaft drifting 1 % over the clip is
// followed; the orders are removed from their old place all the same.
func TestOrderSpeedTracksDrift(t *testing.T) {
	const fs, sec = 16000.0, 6.0
	n := int(fs * sec)
	x := make([]float64, n)
	rng := rand.New(rand.NewPCG(3, 4))
	phi := 0.0
	for i := range x {
		f := 30 * (1 + 0.01*float64(i)/float64(n))
		for k := 1; k <= 5; k++ {
			x[i] += 0.1 / float64(k) * math.Cos(float64(k)*phi)
		}
		x[i] += 0.002 * rng.NormFloat64()
		phi += 2 * math.Pi * f / fs
	}
	y, rep := OrderSpeed{Ratio: 1.02, ShaftHz: 30, BandPercent: 3, Orders: 5}.ApplyReport(nil, x, fs)
	if math.Abs(rep.ShaftHz-30.15) > 0.03 {
		t.Errorf("mean tracked shaft rate %.3f Hz, want 30.15", rep.ShaftHz)
	}
	if a, b := rmsDB(x), rmsDB(y); math.Abs(a-b) > 0.2 {
		t.Errorf("level %.2f dB before, %.2f after, want unchanged (LevelDB 0)", a, b)
	}
	// In the middle second the 1× line sits near 30.15 Hz before and near
	// 30.75 Hz after.
	mid := func(s []float64) []float64 { return s[int(2.5*fs):int(3.5*fs)] }
	if got := lineHz(mid(y), fs, 30.15*1.02, 0.6); math.Abs(got-30.15*1.02) > 0.1 {
		t.Errorf("1× in the middle second at %.3f Hz, want about %.3f", got, 30.15*1.02)
	}
}

// TestPentaSystemSolves checks the banded LDLᵀ solve against the matrix
// it factors.
func TestPentaSystemSolves(t *testing.T) {
	for _, tc := range []struct{ n, step int }{{10, 1}, {37, 4}, {200, 7}} {
		g := newKnotGrid(tc.n, tc.step)
		const lambda = 3.7
		s := g.system(new(arena), lambda)
		want := make([]complex128, g.J)
		for j := range want {
			want[j] = complex(math.Sin(float64(j)), math.Cos(float64(3*j)))
		}
		// b = (PᵀP + λAᵀA)·want, built from its definition
		b := make([]complex128, g.J)
		for i := 0; i < g.n; i++ {
			j, u := g.at(i)
			v := complex(1-u, 0) * want[j]
			if u != 0 {
				v += complex(u, 0) * want[j+1]
			}
			b[j] += complex(1-u, 0) * v
			if u != 0 {
				b[j+1] += complex(u, 0) * v
			}
		}
		for r := 0; r+2 < g.J; r++ {
			a := want[r] - 2*want[r+1] + want[r+2]
			b[r] += lambda * a
			b[r+1] -= 2 * lambda * a
			b[r+2] += lambda * a
		}
		s.solve(b, 1)
		for j := range b {
			if cmplx.Abs(b[j]-want[j]) > 1e-9 {
				t.Fatalf("n %d step %d: x[%d] = %v, want %v", tc.n, tc.step, j, b[j], want[j])
			}
		}
	}
}

// Odd inputs give a clip of the same length with finite samples: silence,
// clips shorter than a knot grid or a tracking frame, no speed band, no
// change, every order above Nyquist, a shaft fast enough that nothing is
// decimated.
func TestOrderSpeedOddInputs(t *testing.T) {
	tone := func(fs, f float64, n int) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = 0.1 * math.Sin(2*math.Pi*f*float64(i)/fs)
		}
		return x
	}
	cases := []struct {
		name string
		o    OrderSpeed
		fs   float64
		x    []float64
	}{
		{"silent", OrderSpeed{Ratio: 1.02, ShaftHz: 25, BandPercent: 2}, 16000, make([]float64, 32000)},
		{"one sample", OrderSpeed{Ratio: 1.02, ShaftHz: 25, BandPercent: 2}, 16000, []float64{0.5}},
		{"50 ms", OrderSpeed{Ratio: 1.02, ShaftHz: 25, BandPercent: 2}, 16000, tone(16000, 25, 800)},
		{"0.4 s", OrderSpeed{Ratio: 1.02, ShaftHz: 25, BandPercent: 2, MainsHz: 60}, 16000, tone(16000, 25, 6400)},
		{"no band", OrderSpeed{Ratio: 1.02, ShaftHz: 25}, 16000, tone(16000, 25, 32000)},
		{"ratio 1", OrderSpeed{Ratio: 1, ShaftHz: 25, BandPercent: 2}, 16000, tone(16000, 25, 32000)},
		{"above Nyquist", OrderSpeed{Ratio: 1.02, ShaftHz: 5000, BandPercent: 2}, 8000, tone(8000, 500, 16000)},
		{"not decimated", OrderSpeed{Ratio: 1.02, ShaftHz: 180, BandPercent: 2, Orders: 8}, 8000, tone(8000, 180, 16000)},
		{"zero ratio", OrderSpeed{ShaftHz: 25}, 16000, tone(16000, 25, 1000)},
	}
	for _, c := range cases {
		y := c.o.Apply(nil, c.x, c.fs)
		if len(y) != len(c.x) || !finiteSamples(y) {
			t.Errorf("%s: %d samples out of %d, finite %v", c.name, len(y), len(c.x), finiteSamples(y))
		}
	}
	// the undecimated path moves the line too
	x := tone(8000, 180, 16000)
	y := OrderSpeed{Ratio: 1.02, ShaftHz: 180, BandPercent: 2, Orders: 8}.Apply(nil, x, 8000)
	if got := lineHz(y, 8000, 183.6, 1); math.Abs(got-183.6) > 0.04 {
		t.Errorf("not decimated: line at %.3f Hz, want 183.6", got)
	}
}
