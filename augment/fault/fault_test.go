package fault

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"thrum/features"
	"thrum/machine"
)

// cwru6205 is the Case Western Reserve University drive-end test bearing,
// SKF 6205-2RS JEM: 9 balls, d = 7.94 mm (0.3126 in), D = 39.04 mm
// (1.537 in), contact angle 0 (CWRU Bearing Data Center, bearing
// information page).
var cwru6205 = machine.Bearing{Name: "6205", Balls: 9, BallDiameterMM: 7.94, PitchDiameterMM: 39.04}

// cwruShaftHz is the CWRU motor at 0 hp load, 1797 rpm (CWRU data set
// description).
const cwruShaftHz = 1797.0 / 60

const (
	testFS  = 12000.0 // the CWRU drive-end sampling rate
	testN   = 60000   // 5 s
	testRMS = 0.05
)

func noiseClip(n int, rms float64, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 0x5eed))
	x := make([]float64, n)
	for i := range x {
		x[i] = rms * rng.NormFloat64()
	}
	return x
}

// bearingCue builds a cue of the given kind from the 6205 rates at shaftHz.
func bearingCue(kind string, shaftHz, jitter float64) Bearing {
	r := cwru6205.Rates(shaftHz)
	b := Bearing{Kind: kind, ShaftHz: shaftHz, CageHz: r.FTF, JitterFrac: jitter, SeverityDB: -6}
	switch kind {
	case KindOuterRace:
		b.DefectHz = r.BPFO
	case KindInnerRace:
		b.DefectHz = r.BPFI
	case KindBall:
		b.DefectHz = r.BallPass()
	case KindCage:
		b.DefectHz = r.FTF
	}
	return b
}

// envSpec adds c to a noise clip and returns the envelope spectrum in the
// 2–4 kHz band around the default 3 kHz resonance.
func envSpec(t testing.TB, c Cue, seed uint64) (spec []float64, binHz float64) {
	return envSpecOf(t, c, seed, false)
}

// envSpecOf is envSpec, computed at baseband up to 1 kHz (the features
// stage's default envelope limit) when baseband is set.
func envSpecOf(t testing.TB, c Cue, seed uint64, baseband bool) (spec []float64, binHz float64) {
	t.Helper()
	clip := noiseClip(testN, testRMS, seed)
	y, _, err := Add(nil, clip, testFS, c, rand.New(rand.NewPCG(seed, 7)))
	if err != nil {
		t.Fatal(err)
	}
	if baseband {
		return features.NewEnvelopePlan(len(y)).BasebandSpectrum(nil, y, testFS, 2000, 4000, 1000)
	}
	return features.EnvelopeSpectrum(nil, y, testFS, 2000, 4000)
}

// peakNear returns the frequency (parabolic interpolation on the bins) and
// height of the largest bin within ±rel·f of f.
func peakNear(spec []float64, binHz, f, rel float64) (hz, height float64) {
	lo := max(1, int(math.Floor(f*(1-rel)/binHz)))
	hi := min(len(spec)-2, int(math.Ceil(f*(1+rel)/binHz)))
	k := lo
	for i := lo; i <= hi; i++ {
		if spec[i] > spec[k] {
			k = i
		}
	}
	a, b, c := spec[k-1], spec[k], spec[k+1]
	d := 0.0
	if den := a - 2*b + c; den != 0 {
		d = 0.5 * (a - c) / den
	}
	return (float64(k) + d) * binHz, b
}

// strongest returns the frequency of the largest bin in [lo, hi] Hz.
func strongest(spec []float64, binHz, lo, hi float64) float64 {
	mid := (lo + hi) / 2
	f, _ := peakNear(spec, binHz, mid, (hi-lo)/2/mid)
	return f
}

// floor is the median of spec over [lo, hi] Hz: the background level.
func floor(spec []float64, binHz, lo, hi float64) float64 {
	s := slices.Clone(spec[int(lo/binHz):int(hi/binHz)])
	slices.Sort(s)
	return s[len(s)/2]
}

// The kinematic rates used below agree with the published CWRU multiples
// (inner 5.4152, outer 3.5848, rolling element 4.7135, cage 0.39828 × shaft;
// CWRU Bearing Data Center) and with the 1797 rpm values BPFO 107.36,
// BPFI 162.19, 2·BSF 141.17, FTF 11.93 Hz (computed from Randall & Antoni
// 2011, eq. for BPFO/BPFI/BSF/FTF).
func TestCWRURates(t *testing.T) {
	r := cwru6205.Rates(cwruShaftHz)
	for _, tc := range []struct {
		name      string
		got, want float64
	}{
		{"bpfo", r.BPFO, 107.36},
		{"bpfi", r.BPFI, 162.19},
		{"2bsf", r.BallPass(), 141.17},
		{"ftf", r.FTF, 11.93},
	} {
		if math.Abs(tc.got-tc.want) > 0.006 {
			t.Errorf("%s = %.4f Hz, want %.2f", tc.name, tc.got, tc.want)
		}
	}
}

// Envelope spectra of the bearing cues show the lines Randall & Antoni
// (2011, section 2) describe: BPFO with harmonics; BPFI with sidebands at
// ±shaft rate; 2·BSF with sidebands at ±FTF; FTF for a cage fault. The line
// must sit within 1 % of the rate (slip tolerance, Randall & Antoni 2011).
// The features stage's baseband spectrum shows the same lines, its
// strongest within one bin of the full-length spectrum's.
func TestBearingEnvelopeLines(t *testing.T) {
	r := cwru6205.Rates(cwruShaftHz)
	for _, tc := range []struct {
		kind      string
		rate      float64
		search    [2]float64 // band in which the rate must be the strongest line
		harmonics []float64  // further multiples of rate that must stand out
		sideband  float64    // modulation rate whose sidebands must stand out
	}{
		{KindOuterRace, r.BPFO, [2]float64{5, 500}, []float64{2, 3}, 0},
		{KindInnerRace, r.BPFI, [2]float64{5, 500}, []float64{2}, cwruShaftHz},
		{KindBall, r.BallPass(), [2]float64{5, 500}, []float64{2}, r.FTF},
		{KindCage, r.FTF, [2]float64{2, 200}, []float64{2, 3}, 0},
	} {
		t.Run(tc.kind, func(t *testing.T) {
			for _, c := range []struct {
				jitter   float64
				baseband bool
			}{{0, false}, {DefaultJitterFrac, false}, {0, true}, {DefaultJitterFrac, true}} {
				jitter := c.jitter
				spec, bin := envSpecOf(t, bearingCue(tc.kind, cwruShaftHz, jitter), 11, c.baseband)
				f := strongest(spec, bin, tc.search[0], tc.search[1])
				if math.Abs(f-tc.rate) > 0.01*tc.rate {
					t.Errorf("jitter %g, baseband %v: strongest line at %.2f Hz, want %.2f Hz ± 1 %%", jitter, c.baseband, f, tc.rate)
				}
				if c.baseband {
					full, _ := envSpecOf(t, bearingCue(tc.kind, cwruShaftHz, jitter), 11, false)
					if ff := strongest(full, bin, tc.search[0], tc.search[1]); math.Abs(f-ff) > bin {
						t.Errorf("jitter %g: baseband strongest line at %.3f Hz, full-length at %.3f Hz (bin %.3f Hz)", jitter, f, ff, bin)
					}
				}
				bg := floor(spec, bin, tc.search[0], tc.search[1])
				stand := func(what string, f float64) {
					if _, h := peakNear(spec, bin, f, 0.005); h < 4*bg {
						t.Errorf("jitter %g: %s at %.2f Hz is %.2g, background %.2g: want ≥ 4×", jitter, what, f, h, bg)
					}
				}
				for _, h := range tc.harmonics {
					stand(fmt.Sprintf("%g× harmonic", h), h*tc.rate)
				}
				if tc.sideband > 0 {
					stand("lower sideband", tc.rate-tc.sideband)
					stand("upper sideband", tc.rate+tc.sideband)
				}
			}
		})
	}
	// Without a cue the same band shows no line at BPFO: the check above
	// can fail.
	clip := noiseClip(testN, testRMS, 11)
	spec, bin := features.EnvelopeSpectrum(nil, clip, testFS, 2000, 4000)
	if _, h := peakNear(spec, bin, r.BPFO, 0.005); h > 4*floor(spec, bin, 5, 500) {
		t.Errorf("noise alone has a line at BPFO")
	}
}

// A speed change by r moves every defect line by r (kinematic rates are
// proportional to shaft speed; Randall & Antoni 2011). The caller scales the
// rates; the cue follows them exactly.
func TestBearingLinesFollowSpeed(t *testing.T) {
	const ratio = 1.02
	for _, tc := range []struct {
		kind string
		rate func(machine.DefectRates) float64
	}{
		{KindOuterRace, func(d machine.DefectRates) float64 { return d.BPFO }},
		{KindInnerRace, func(d machine.DefectRates) float64 { return d.BPFI }},
		{KindBall, func(d machine.DefectRates) float64 { return d.BallPass() }},
	} {
		t.Run(tc.kind, func(t *testing.T) {
			var lines [2]float64
			for i, shaft := range []float64{cwruShaftHz, cwruShaftHz * ratio} {
				b := bearingCue(tc.kind, shaft, 0)
				spec, bin := envSpec(t, b, 5)
				lines[i], _ = peakNear(spec, bin, tc.rate(cwru6205.Rates(shaft)), 0.01)
			}
			if got := lines[1] / lines[0]; math.Abs(got-ratio) > 1e-3 {
				t.Errorf("line moved by %.5f (%.3f → %.3f Hz), want %g", got, lines[0], lines[1], ratio)
			}
		})
	}
}

// Slip jitter broadens the envelope-spectrum lines, more at higher
// harmonics (a renewal process's phase diffuses; Randall & Antoni 2011,
// section 2.2), while the line's peak stays within 1 % of BPFO.
func TestJitterBroadensLine(t *testing.T) {
	r := cwru6205.Rates(cwruShaftHz)
	concentration := func(spec []float64, bin, f float64) float64 {
		k := int(math.Round(f / bin))
		w := int(5 / bin)
		var tot, pk float64
		for i := k - w; i <= k+w; i++ {
			tot += spec[i] * spec[i]
			pk = max(pk, spec[i])
		}
		return pk * pk / tot
	}
	var conc [2]float64
	for i, jitter := range []float64{0, DefaultJitterFrac} {
		spec, bin := envSpec(t, bearingCue(KindOuterRace, cwruShaftHz, jitter), 3)
		if f, _ := peakNear(spec, bin, r.BPFO, 0.02); math.Abs(f-r.BPFO) > 0.01*r.BPFO {
			t.Errorf("jitter %g: BPFO line at %.2f Hz, want %.2f ± 1 %%", jitter, f, r.BPFO)
		}
		conc[i] = concentration(spec, bin, 3*r.BPFO)
	}
	if !(conc[1] < 0.6*conc[0]) {
		t.Errorf("3×BPFO peak holds %.2f of the ±5 Hz power with jitter, %.2f without: want broader", conc[1], conc[0])
	}
}

// With jitter 0 the impacts are exactly periodic: in the drawn times, and in
// the synthesised samples, whose onsets (threshold crossings after a quiet
// gap) lie on a line of slope 1/BPFO to within a sample. With jitter the
// same detector sees the onsets wander.
func TestImpactOnsets(t *testing.T) {
	const fs, n = 48000.0, 48000
	r := cwru6205.Rates(cwruShaftHz)
	for _, tc := range []struct {
		jitter   float64
		periodic bool
	}{
		{0, true},
		{DefaultJitterFrac, false},
	} {
		t.Run(fmt.Sprint("jitter", tc.jitter), func(t *testing.T) {
			b := bearingCue(KindOuterRace, cwruShaftHz, tc.jitter).withDefaults()
			times, _ := b.impacts(n, fs, rand.New(rand.NewPCG(9, 9)))
			period := 1 / r.BPFO
			var worst float64
			for k := 1; k < len(times); k++ {
				worst = math.Max(worst, math.Abs(times[k]-times[k-1]-period)/period)
			}
			if tc.periodic && worst > 1e-9 {
				t.Errorf("drawn intervals deviate from 1/BPFO by up to %.3g (relative)", worst)
			}
			if !tc.periodic {
				var s, s2 float64
				for k := 1; k < len(times); k++ {
					d := (times[k] - times[k-1] - period) / period
					s += d
					s2 += d * d
				}
				m := float64(len(times) - 1)
				if sd := math.Sqrt(s2/m - (s/m)*(s/m)); math.Abs(sd-tc.jitter) > 0.003 {
					t.Errorf("interval jitter %.4f, want %.4f", sd, tc.jitter)
				}
			}

			x, err := b.Synthesize(nil, n, fs, 1, rand.New(rand.NewPCG(9, 9)))
			if err != nil {
				t.Fatal(err)
			}
			var peak float64
			for _, v := range x {
				peak = math.Max(peak, math.Abs(v))
			}
			thr, quiet := 0.2*peak, int(0.002*fs)
			var onsets []float64
			for i := quiet; i < n; i++ {
				if math.Abs(x[i]) <= thr {
					continue
				}
				loud := false
				for j := i - quiet; j < i; j++ {
					loud = loud || math.Abs(x[j]) > thr
				}
				if !loud {
					onsets = append(onsets, float64(i))
				}
			}
			if len(onsets) < 40 {
				t.Fatalf("found %d onsets in 1 s, want about %.0f", len(onsets), r.BPFO)
			}
			// Least-squares line through (k, onset_k).
			var sk, so, skk, sko float64
			m := float64(len(onsets))
			for k, o := range onsets {
				fk := float64(k)
				sk, so, skk, sko = sk+fk, so+o, skk+fk*fk, sko+fk*o
			}
			slope := (m*sko - sk*so) / (m*skk - sk*sk)
			icpt := (so - slope*sk) / m
			var resid float64
			for k, o := range onsets {
				resid = math.Max(resid, math.Abs(o-icpt-slope*float64(k)))
			}
			ok := resid <= 1.5 && math.Abs(slope-fs*period) < 0.01
			if ok != tc.periodic {
				t.Errorf("onset line slope %.3f samples (1/BPFO = %.3f), worst residual %.2f samples: periodic = %v, want %v",
					slope, fs*period, resid, ok, tc.periodic)
			}
		})
	}
}

// Every cue: the level relative to the clip RMS is exactly SeverityDB, Add
// adds exactly the cue, the same seed gives identical samples and a
// different seed different ones.
func TestSeverityAddDeterminism(t *testing.T) {
	phase := 0.3
	for _, c := range []Cue{
		bearingCue(KindOuterRace, cwruShaftHz, DefaultJitterFrac),
		bearingCue(KindInnerRace, cwruShaftHz, DefaultJitterFrac),
		bearingCue(KindBall, cwruShaftHz, DefaultJitterFrac),
		bearingCue(KindCage, cwruShaftHz, DefaultJitterFrac),
		Impact{Count: 3, SeverityDB: -20},
		Impact{RateHz: cwruShaftHz, JitterFrac: 0.01, ShaftHz: cwruShaftHz, SeverityDB: -12},
		Orders{Kind: KindImbalance, ShaftHz: cwruShaftHz, SeverityDB: -3},
		Orders{Kind: KindMisalignment, ShaftHz: cwruShaftHz, Phase: &phase, SeverityDB: 2},
		GearTooth{MeshHz: 160, FaultShaftHz: 20, SeverityDB: -10},
	} {
		lab := c.Label()
		t.Run(lab.Kind, func(t *testing.T) {
			clip := noiseClip(testN, testRMS, 1)
			y, got, err := Add(nil, clip, testFS, c, rand.New(rand.NewPCG(42, 1)))
			if err != nil {
				t.Fatal(err)
			}
			cue, err := c.Synthesize(nil, testN, testFS, RMS(clip), rand.New(rand.NewPCG(42, 1)))
			if err != nil {
				t.Fatal(err)
			}
			if db := 20 * math.Log10(RMS(cue)/RMS(clip)); math.Abs(db-lab.SeverityDB) > 1e-9 {
				t.Errorf("cue level %.6f dB re clip, want %g", db, lab.SeverityDB)
			}
			for i := range y {
				if y[i] != clip[i]+cue[i] {
					t.Fatalf("sample %d: Add gave %g, clip + cue = %g", i, y[i], clip[i]+cue[i])
				}
			}
			if got.Kind != lab.Kind || got.SeverityDB != lab.SeverityDB {
				t.Errorf("Add label %+v, want %+v", got, lab)
			}
			again, _ := c.Synthesize(make([]float64, 3), testN, testFS, RMS(clip), rand.New(rand.NewPCG(42, 1)))
			if !slices.Equal(again, cue) {
				t.Errorf("same seed gave different samples")
			}
			other, _ := c.Synthesize(nil, testN, testFS, RMS(clip), rand.New(rand.NewPCG(43, 1)))
			if slices.Equal(other, cue) && lab.Kind != KindMisalignment { // misalignment's phase is given: no draw
				t.Errorf("different seed gave identical samples")
			}
			// In place.
			inplace := slices.Clone(clip)
			if _, _, err := Add(inplace, inplace, testFS, c, rand.New(rand.NewPCG(42, 1))); err != nil || !slices.Equal(inplace, y) {
				t.Errorf("in-place Add differs (err %v)", err)
			}
		})
	}
}

// line returns the complex amplitude of the component at f Hz in x (an
// integer number of cycles in x): 2/n·Σ x[i]·e^{−j2πf i/fs}, so
// a·cos(2πft + φ) reads a·e^{jφ}.
func line(x []float64, fs, f float64) complex128 {
	var s complex128
	for i, v := range x {
		s += complex(v, 0) * cmplx.Exp(complex(0, -2*math.Pi*f*float64(i)/fs))
	}
	return s * complex(2/float64(len(x)), 0)
}

// Imbalance raises the 1× line: on a clip that is a pure 1× tone (RMS R),
// a cue at severity S with the shaft's own phase adds a coherent 1×
// component of amplitude √2·R·10^(S/20), so the line grows to
// |1 + 10^(S/20)·e^{jΔ}| times its old amplitude for a phase offset Δ
// (derived: phasor sum).
func TestImbalanceRaisesOrder(t *testing.T) {
	const fs, n, shaft = 12000.0, 12000, 30.0 // 1 s: whole cycles
	const phi = 0.7
	clip := make([]float64, n)
	for i := range clip {
		clip[i] = 0.1 * math.Cos(2*math.Pi*shaft*float64(i)/fs+phi)
	}
	for _, tc := range []struct {
		sevDB, offset float64
	}{
		{0, 0}, {-6, 0}, {-20, 0}, {0, math.Pi / 2}, {-6, math.Pi},
	} {
		t.Run(fmt.Sprintf("%gdB_offset%.2f", tc.sevDB, tc.offset), func(t *testing.T) {
			p := phi + tc.offset
			c := Orders{Kind: KindImbalance, ShaftHz: shaft, Phase: &p, SeverityDB: tc.sevDB}
			y, _, err := Add(nil, clip, fs, c, rand.New(rand.NewPCG(1, 1)))
			if err != nil {
				t.Fatal(err)
			}
			g := math.Pow(10, tc.sevDB/20)
			want := 20 * math.Log10(cmplx.Abs(1+complex(g, 0)*cmplx.Exp(complex(0, tc.offset))))
			got := 20 * math.Log10(cmplx.Abs(line(y, fs, shaft))/cmplx.Abs(line(clip, fs, shaft)))
			if math.Abs(got-want) > 1e-6 {
				t.Errorf("1× line rose by %.4f dB, want %.4f", got, want)
			}
		})
	}
	// On a broadband clip with no 1× content, the 1× line's RMS equals the
	// severity relative to the clip RMS.
	noise := noiseClip(n, testRMS, 4)
	c := Orders{Kind: KindImbalance, ShaftHz: shaft, SeverityDB: -10}
	y, _, _ := Add(nil, noise, fs, c, rand.New(rand.NewPCG(2, 2)))
	lvl := 20 * math.Log10(cmplx.Abs(line(y, fs, shaft))/math.Sqrt2/RMS(noise))
	if math.Abs(lvl+10) > 0.2 {
		t.Errorf("1× line at %.2f dB re clip RMS, want −10", lvl)
	}
}

// Misalignment raises 2× and 3× (gains 1 and 0.5), not 1×.
func TestMisalignmentOrders(t *testing.T) {
	const fs, n, shaft = 12000.0, 12000, 25.0
	x, err := Orders{Kind: KindMisalignment, ShaftHz: shaft}.Synthesize(nil, n, fs, 1, rand.New(rand.NewPCG(3, 3)))
	if err != nil {
		t.Fatal(err)
	}
	a1, a2, a3 := cmplx.Abs(line(x, fs, shaft)), cmplx.Abs(line(x, fs, 2*shaft)), cmplx.Abs(line(x, fs, 3*shaft))
	if a1 > 1e-9 || math.Abs(a3/a2-0.5) > 1e-9 {
		t.Errorf("orders 1×, 2×, 3× = %.3g, %.3g, %.3g: want 0 and 3×/2× = 0.5", a1, a2, a3)
	}
	// Rms of a2·cos + a3·cos is √((a2²+a3²)/2), the requested 0 dB re 1.
	if rms := math.Sqrt((a2*a2 + a3*a3) / 2); math.Abs(rms-1) > 1e-9 {
		t.Errorf("orders carry RMS %.6f, want 1", rms)
	}
}

// Gear-mesh cue: an 8-tooth pinion at 20 Hz meshes at GMF = 8·20 = 160 Hz
// (Randall, Vibration-based Condition Monitoring, 2011: GMF = Z·f_shaft);
// a tooth fault on the pinion puts sidebands at 160 ± 20 = 140 and 180 Hz.
// Between them (150, 170 Hz) there is nothing.
func TestGearToothSidebands(t *testing.T) {
	const fs, n = 12000.0, 12000 // 1 s: 20 revolutions exactly
	const teeth, pinion = 8, 20.0
	gmf := teeth * pinion
	x, err := GearTooth{MeshHz: gmf, FaultShaftHz: pinion}.Synthesize(nil, n, fs, 1, rand.New(rand.NewPCG(5, 5)))
	if err != nil {
		t.Fatal(err)
	}
	at := func(f float64) float64 { return cmplx.Abs(line(x, fs, f)) }
	mesh := at(gmf)
	for _, h := range []float64{1, 2} {
		for _, f := range []float64{h*gmf - pinion, h*gmf + pinion} {
			if a, m := at(f), at(h*gmf); a < 0.05*m {
				t.Errorf("sideband at %g Hz is %.3g, mesh harmonic %.3g: want ≥ 5 %%", f, a, m)
			}
		}
	}
	for _, f := range []float64{gmf - pinion/2, gmf + pinion/2, 150 + 1} {
		if a := at(f); a > 1e-6*mesh {
			t.Errorf("off-grid %g Hz carries %.3g", f, a)
		}
	}
	if a := at(2 * gmf); a < 0.3*mesh {
		t.Errorf("2×GMF %.3g, want the second mesh harmonic", a)
	}
}

func TestValidation(t *testing.T) {
	ok := bearingCue(KindOuterRace, cwruShaftHz, 0)
	for _, tc := range []struct {
		name string
		c    Cue
		fs   float64
		want string
	}{
		{"kind", Bearing{Kind: "race", DefectHz: 100}, testFS, "bearing kind"},
		{"no rate", Bearing{Kind: KindOuterRace}, testFS, "defect rate"},
		{"inner no shaft", Bearing{Kind: KindInnerRace, DefectHz: 160}, testFS, "shaft rate"},
		{"ball no cage", Bearing{Kind: KindBall, DefectHz: 140}, testFS, "cage rate"},
		{"resonance", Bearing{Kind: KindOuterRace, DefectHz: 100, ResonanceHz: 7000}, testFS, "resonance"},
		{"damping", Bearing{Kind: KindOuterRace, DefectHz: 100, Damping: 1.5}, testFS, "damping"},
		{"jitter", Bearing{Kind: KindOuterRace, DefectHz: 100, JitterFrac: -0.1}, testFS, "jitter"},
		{"severity", Bearing{Kind: KindOuterRace, DefectHz: 100, SeverityDB: math.NaN()}, testFS, "severity"},
		{"fs", ok, 0, "sample rate"},
		{"impact rate", Impact{RateHz: -3}, testFS, "rate"},
		{"orders kind", Orders{Kind: "wobble", ShaftHz: 30}, testFS, "orders kind"},
		{"orders gains", Orders{Kind: KindImbalance, ShaftHz: 30, Gains: []float64{0}}, testFS, "no order"},
		{"gear shaft", GearTooth{MeshHz: 160}, testFS, "fault shaft"},
		{"gear order", GearTooth{MeshHz: 10, FaultShaftHz: 20}, testFS, "above mesh"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.c.Validate(tc.fs)
			if err == nil || !strings.HasPrefix(err.Error(), "fault: ") || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("Validate = %v, want a fault: error about %q", err, tc.want)
			}
			if _, err := tc.c.Synthesize(nil, 100, tc.fs, 1, rand.New(rand.NewPCG(1, 1))); err == nil {
				t.Errorf("Synthesize accepted what Validate rejects")
			}
		})
	}
	if err := ok.Validate(testFS); err != nil {
		t.Errorf("valid cue rejected: %v", err)
	}
	if _, _, err := Add(nil, make([]float64, 100), testFS, ok, rand.New(rand.NewPCG(1, 1))); !errors.Is(err, ErrSilentClip) {
		t.Errorf("silent clip: err %v, want ErrSilentClip", err)
	}
}

func TestLabels(t *testing.T) {
	r := cwru6205.Rates(cwruShaftHz)
	for _, tc := range []struct {
		c    Cue
		key  string
		want float64
	}{
		{bearingCue(KindOuterRace, cwruShaftHz, 0), "bpfo", r.BPFO},
		{bearingCue(KindInnerRace, cwruShaftHz, 0), "bpfi", r.BPFI},
		{bearingCue(KindBall, cwruShaftHz, 0), "bsf", r.BSF},
		{bearingCue(KindBall, cwruShaftHz, 0), "ftf", r.FTF},
		{Bearing{Kind: KindCage, CageHz: r.FTF}, "ftf", r.FTF},
		{Bearing{Kind: KindCage, CageHz: r.FTF}, "defect", r.FTF},
		{GearTooth{MeshHz: 160, FaultShaftHz: 20}, "gmf", 160},
		{Orders{Kind: KindMisalignment, ShaftHz: 25}, "order3", 75},
	} {
		l := tc.c.Label()
		if got, ok := l.Frequencies[tc.key]; !ok || math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("%s label %s = %v, want %g", l.Kind, tc.key, l.Frequencies, tc.want)
		}
		if !slices.Contains(Kinds(), l.Kind) {
			t.Errorf("label kind %q not in Kinds()", l.Kind)
		}
	}
	k := Kinds()
	k[0] = "changed"
	if Kinds()[0] != KindOuterRace {
		t.Errorf("Kinds shares its slice")
	}
}

func BenchmarkCue10s16k(b *testing.B) {
	const fs, n = 16000.0, 160000
	r := cwru6205.Rates(cwruShaftHz)
	for _, c := range []Cue{
		Bearing{Kind: KindOuterRace, DefectHz: r.BPFO, JitterFrac: DefaultJitterFrac},
		Bearing{Kind: KindInnerRace, ShaftHz: cwruShaftHz, DefectHz: r.BPFI, JitterFrac: DefaultJitterFrac},
		Bearing{Kind: KindCage, CageHz: r.FTF, JitterFrac: DefaultJitterFrac},
		Impact{Count: 5},
		Orders{Kind: KindMisalignment, ShaftHz: cwruShaftHz},
		GearTooth{MeshHz: 160, FaultShaftHz: 20},
	} {
		b.Run(c.Label().Kind, func(b *testing.B) {
			dst := make([]float64, n)
			rng := rand.New(rand.NewPCG(1, 2))
			for b.Loop() {
				if _, err := c.Synthesize(dst, n, fs, 0.1, rng); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkBiquad10s16k is the yardstick: one direct-form-I biquad over the
// same 10 s at 16 kHz, about the cheapest augmentation step.
func BenchmarkBiquad10s16k(b *testing.B) {
	x := noiseClip(160000, 0.1, 1)
	y := make([]float64, len(x))
	b0, b1, b2, a1, a2 := 0.2, 0.4, 0.2, -0.6, 0.2
	for b.Loop() {
		var x1, x2, y1, y2 float64
		for i, v := range x {
			o := b0*v + b1*x1 + b2*x2 - a1*y1 - a2*y2
			x2, x1, y2, y1 = x1, v, y1, o
			y[i] = o
		}
	}
}

// New builds every kind from one set of rates, and the label carries the
// rate the kind is named for.
func TestNew(t *testing.T) {
	d := cwru6205.Rates(cwruShaftHz)
	r := Rates{ShaftHz: cwruShaftHz, FTF: d.FTF, BPFO: d.BPFO, BPFI: d.BPFI, BSF: d.BSF, MeshHz: 160, FaultShaftHz: 20}
	want := map[string][2]any{
		KindOuterRace:    {"bpfo", d.BPFO},
		KindInnerRace:    {"bpfi", d.BPFI},
		KindBall:         {"bsf", d.BSF},
		KindCage:         {"ftf", d.FTF},
		KindImpact:       {"rate", cwruShaftHz},
		KindImbalance:    {"order1", cwruShaftHz},
		KindMisalignment: {"order2", 2 * cwruShaftHz},
		KindGearTooth:    {"gmf", 160.0},
	}
	for _, kind := range Kinds() {
		c, err := New(kind, r, Params{SeverityDB: -8, JitterFrac: DefaultJitterFrac})
		if err != nil {
			t.Fatalf("%s: %v", kind, err)
		}
		if err := c.Validate(testFS); err != nil {
			t.Errorf("%s: %v", kind, err)
		}
		l := c.Label()
		key, f := want[kind][0].(string), want[kind][1].(float64)
		if l.Kind != kind || l.SeverityDB != -8 || math.Abs(l.Frequencies[key]-f) > 1e-12 {
			t.Errorf("%s: label %+v, want kind %s, %s = %g, -8 dB", kind, l, kind, key, f)
		}
	}
	if _, err := New("spall", r, Params{}); err == nil || !strings.HasPrefix(err.Error(), "fault: ") {
		t.Errorf("unknown kind: err %v", err)
	}
	if c, _ := New(KindImpact, r, Params{ImpactCount: 4}); c.(Impact).Count != 4 || c.(Impact).RateHz != 0 {
		t.Errorf("ImpactCount 4 gave %+v", c)
	}
}

// A bearing cue's label names the machine's bearing it was built for, as a
// copy; a cue built without one, and other kinds, name none.
func TestLabelBearing(t *testing.T) {
	ref := &BearingRef{Index: 1, Name: "non-drive end"}
	l := Bearing{Kind: KindOuterRace, DefectHz: 100, Of: ref}.Label()
	if l.Bearing == nil || *l.Bearing != *ref || l.Bearing == ref {
		t.Errorf("label bearing %+v, want a copy of %+v", l.Bearing, *ref)
	}
	for _, c := range []Cue{Bearing{Kind: KindOuterRace, DefectHz: 100}, Orders{Kind: KindImbalance, ShaftHz: 25}, Impact{Count: 1}} {
		if b := c.Label().Bearing; b != nil {
			t.Errorf("%s label names bearing %+v", c.Label().Kind, *b)
		}
	}
}
