package demoplant

import (
	"bytes"
	"context"
	"errors"
	"io/fs"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"sync"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"

	"thrum/machine"
	"thrum/machine/wavio"
)

const testSeconds = 12

// demo writes the demo plant once for the tests that only read it.
var demo = sync.OnceValues(func() (string, error) {
	dir, err := os.MkdirTemp("", "demoplant-test-")
	if err != nil {
		return "", err
	}
	return Write(dir, Options{Seed: 7, Seconds: testSeconds})
})

func demoPlant(t *testing.T) (*machine.Plant, string) {
	t.Helper()
	path, err := demo()
	if err != nil {
		t.Fatal(err)
	}
	p, err := machine.Load(path)
	if err != nil {
		t.Fatalf("Load(%s): %v", path, err)
	}
	return p, filepath.Dir(path)
}

func TestMain(m *testing.M) {
	code := m.Run()
	if path, err := demo(); err == nil {
		os.RemoveAll(filepath.Dir(path))
	}
	os.Exit(code)
}

func TestWriteLoads(t *testing.T) {
	p, _ := demoPlant(t)
	if p.Seed != 7 || p.SampleRate != 16000 || p.ClipSeconds != 10 {
		t.Errorf("seed %d, rate %d, clip %g", p.Seed, p.SampleRate, p.ClipSeconds)
	}
}

func TestExampleTOMLLoads(t *testing.T) {
	path := filepath.Join(t.TempDir(), "plant.toml")
	if err := os.WriteFile(path, []byte(ExampleTOML()), 0o644); err != nil {
		t.Fatal(err)
	}
	// Parse, not Load: the background file the example names is not written
	// here, and Load checks it.
	p, err := machine.Parse([]byte(ExampleTOML()), path)
	if err != nil {
		t.Fatalf("Parse(ExampleTOML): %v", err)
	}
	if p.Seed != DefaultSeed || p.ClipSeconds != ClipSeconds {
		t.Errorf("seed %d, clip %g", p.Seed, p.ClipSeconds)
	}
	// What the example must show a new user.
	kinds := map[string]bool{}
	holdOut, gears, bearings, blades, faults := 0, 0, 0, 0, 0
	for _, m := range p.Machines {
		kinds[m.Kind] = true
		if len(m.Conditions) < 2 {
			t.Errorf("%s has %d conditions, want ≥ 2", m.ID, len(m.Conditions))
		}
		for _, c := range m.Conditions {
			if c.HoldOut {
				holdOut++
			}
		}
		gears += len(m.Gears)
		bearings += len(m.Bearings)
		if m.Blades > 0 {
			blades++
		}
		if m.Faults != nil {
			faults++
		}
	}
	if len(kinds) < 3 || holdOut == 0 || gears == 0 || bearings == 0 || blades < 2 || faults < 3 {
		t.Errorf("kinds %v, hold-outs %d, gear stages %d, bearings %d, bladed %d, fault plans %d",
			kinds, holdOut, gears, bearings, blades, faults)
	}
	if len(p.Rooms) == 0 || len(p.Zones) == 0 || len(p.Recipes) == 0 || len(p.Backgrounds) == 0 {
		t.Errorf("rooms %d, zones %d, recipes %d, backgrounds %d", len(p.Rooms), len(p.Zones), len(p.Recipes), len(p.Backgrounds))
	}
	// The file Write makes with the default options is ExampleTOML.
	dir := t.TempDir()
	got, err := Write(dir, Options{Seconds: 1})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(got)
	want := strings.Replace(ExampleTOML(), "clip_seconds = 10", "clip_seconds = 1", 1)
	if string(b) != want {
		t.Error("Write's plant.toml differs from ExampleTOML beyond clip_seconds")
	}
}

// files lists the plant folder's files, slash-separated and sorted.
func files(t *testing.T, dir string) []string {
	t.Helper()
	var out []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if !d.IsDir() {
			rel, _ := filepath.Rel(dir, p)
			out = append(out, filepath.ToSlash(rel))
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	sort.Strings(out)
	return out
}

func TestLayout(t *testing.T) {
	p, dir := demoPlant(t)
	got := files(t, dir)
	want := []string{
		"backgrounds/hall-ambience.wav",
		"plant.toml",
		"recordings/conveyor-c1/full/anomalous/inner-race-01.wav",
		"recordings/conveyor-c1/full/anomalous/inner-race-02.wav",
		"recordings/conveyor-c1/full/session-visit-02/take-06.wav",
		"recordings/conveyor-c1/full/session-visit-02/take-07.wav",
		"recordings/conveyor-c1/full/take-01.wav",
		"recordings/conveyor-c1/full/take-02.wav",
		"recordings/conveyor-c1/full/take-03.wav",
		"recordings/conveyor-c1/full/take-04.wav",
		"recordings/conveyor-c1/full/take-05.wav",
		"recordings/conveyor-c1/half/take-01.wav",
		"recordings/conveyor-c1/half/take-02.wav",
		"recordings/conveyor-c1/half/take-03.wav",
		"recordings/conveyor-c1/half/take-04.wav",
		"recordings/conveyor-c1/half/take-05.wav",
		"recordings/conveyor-c1/half/take-06.wav",
		"recordings/fan-f1/high/anomalous/blade-rub-01.wav",
		"recordings/fan-f1/high/anomalous/blade-rub-02.wav",
		"recordings/fan-f1/high/take-01.wav",
		"recordings/fan-f1/high/take-02.wav",
		"recordings/fan-f1/high/take-03.wav",
		"recordings/fan-f1/high/take-04.wav",
		"recordings/fan-f1/high/take-05.wav",
		"recordings/fan-f1/high/take-06.wav",
		"recordings/fan-f1/low/take-01.wav",
		"recordings/fan-f1/low/take-02.wav",
		"recordings/pump-p1/duty/anomalous/outer-race-01.wav",
		"recordings/pump-p1/duty/anomalous/outer-race-02.wav",
		"recordings/pump-p1/duty/take-01.wav",
		"recordings/pump-p1/duty/take-02.wav",
		"recordings/pump-p1/duty/take-03.wav",
		"recordings/pump-p1/duty/take-04.wav",
		"recordings/pump-p1/duty/take-05.wav",
		"recordings/pump-p1/duty/take-06.wav",
		"recordings/pump-p1/reduced/take-01.wav",
		"recordings/pump-p1/reduced/take-02.wav",
		"recordings/pump-p1/reduced/take-03.wav",
		"recordings/pump-p1/reduced/take-04.wav",
		"recordings/pump-p1/reduced/take-05.wav",
		"recordings/pump-p1/reduced/take-06.wav",
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("files:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	// The inventory sees every recording, the session and the anomalous
	// files, with no problems.
	inv, err := machine.Scan(context.Background(), p, machine.ScanOptions{Levels: true})
	if err != nil {
		t.Fatal(err)
	}
	for _, pr := range inv.Problems {
		t.Errorf("inventory problem: %s", pr)
	}
	sessions, anomalous := 0, 0
	groups := map[string]map[string]bool{} // machine/condition → normal groups
	for _, r := range inv.Recordings {
		if r.Session == "visit-02" {
			sessions++
		}
		if r.Label == machine.LabelAnomalous {
			anomalous++
		} else {
			k := r.Machine + "/" + r.Condition
			if groups[k] == nil {
				groups[k] = map[string]bool{}
			}
			groups[k][r.Group] = true
		}
		if !r.Usable() {
			t.Errorf("%s not usable: %v", r.Rel, r.Err)
		}
	}
	if len(inv.Recordings) != 39 || sessions != 2 || anomalous != 6 {
		t.Errorf("inventory: %d recordings, %d in the session, %d anomalous; want 39, 2, 6", len(inv.Recordings), sessions, anomalous)
	}
	// Every machine has two anomalous groups in a condition that is not
	// held out, so eval and test each get one.
	anomGroups := map[string]map[string]bool{}
	for _, r := range inv.Recordings {
		if r.Label != machine.LabelAnomalous {
			continue
		}
		if c := p.Machine(r.Machine).Condition(r.Condition); c == nil || c.HoldOut {
			t.Errorf("%s: anomalous recording in a held-out or unknown condition", r.Rel)
		}
		if anomGroups[r.Machine] == nil {
			anomGroups[r.Machine] = map[string]bool{}
		}
		anomGroups[r.Machine][r.Group] = true
	}
	for _, m := range p.Machines {
		if n := len(anomGroups[m.ID]); n != 2 {
			t.Errorf("%s: %d anomalous groups, want 2", m.ID, n)
		}
	}
	// Enough split groups: six per condition, so that every split gets
	// one; two for the held-out condition, which goes to test.
	for _, m := range p.Machines {
		for _, c := range m.Conditions {
			want := 6
			if c.HoldOut {
				want = 2
			}
			if n := len(groups[m.ID+"/"+c.Name]); n != want {
				t.Errorf("%s/%s: %d normal split groups, want %d", m.ID, c.Name, n, want)
			}
		}
	}
}

func readWAV(t *testing.T, path string) []float64 {
	t.Helper()
	a, err := wavio.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if a.Format.SampleRate != 16000 || a.Format.Channels != 1 || a.Format.BitDepth != 16 || a.Format.Float {
		t.Fatalf("%s: format %+v, want 16 kHz mono 16-bit PCM", path, a.Format)
	}
	return a.Data
}

func TestRecordingLevels(t *testing.T) {
	_, dir := demoPlant(t)
	peakMax := math.Pow(10, -1.0/20) // −1 dBFS
	for _, f := range files(t, dir) {
		if !strings.HasSuffix(f, ".wav") {
			continue
		}
		x := readWAV(t, filepath.Join(dir, f))
		want := testSeconds * 16000
		if strings.Contains(f, "/anomalous/") && !strings.Contains(f, "/outer-race-") {
			want = ClipSeconds * 16000 // the short anomalous takes: one clip
		}
		if len(x) != want {
			t.Errorf("%s: %d frames, want %d", f, len(x), want)
		}
		peak, sum := 0.0, 0.0
		for _, v := range x {
			peak = math.Max(peak, math.Abs(v))
			sum += v
		}
		if peak >= peakMax {
			t.Errorf("%s: peak %.2f dBFS, want below −1", f, 20*math.Log10(peak))
		}
		if r := rms(x); r < 0.005 || r > 0.3 {
			t.Errorf("%s: RMS %.1f dB re full scale, outside −46 … −10", f, 20*math.Log10(r))
		}
		if dc := sum / float64(len(x)); math.Abs(dc) > 1e-3 {
			t.Errorf("%s: DC %g", f, dc)
		}
	}
	// The near take of each condition is louder than the far one: direct
	// sound falls as 1/d while reflections and the floor do not. Measured in
	// the broadband bearing-noise band around 4 kHz, where the room's comb
	// filtering averages out (a single tonal line may sit in a notch).
	for _, m := range []string{"pump-p1/duty", "pump-p1/reduced", "fan-f1/high", "fan-f1/low", "conveyor-c1/full", "conveyor-c1/half"} {
		near := readWAV(t, filepath.Join(dir, "recordings", m, "take-01.wav"))
		far := readWAV(t, filepath.Join(dir, "recordings", m, "take-02.wav"))
		bandpass(4000, 0.8, 16000).run(near)
		bandpass(4000, 0.8, 16000).run(far)
		if d := 20 * math.Log10(rms(near)/rms(far)); d < 2 {
			t.Errorf("%s: near take only %.1f dB above the far one around 4 kHz", m, d)
		}
	}
}

// welch is the averaged power spectrum of x: periodic Hann windows of n
// samples, hop n/2 (Welch 1967).
func welch(x []float64, n int) []float64 {
	fft := fourier.NewFFT(n)
	win := make([]float64, n)
	for i := range win {
		win[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(n))
	}
	seg := make([]float64, n)
	coef := make([]complex128, n/2+1)
	out := make([]float64, n/2+1)
	for lo := 0; lo+n <= len(x); lo += n / 2 {
		for i := range seg {
			seg[i] = x[lo+i] * win[i]
		}
		fft.Coefficients(coef, seg)
		for i, c := range coef {
			a := cmplx.Abs(c)
			out[i] += a * a
		}
	}
	return out
}

// peakHz is the frequency of the strongest bin of p between lo and hi Hz.
func peakHz(p []float64, n int, rate, lo, hi float64) float64 {
	df := rate / float64(n)
	best, at := -1.0, 0.0
	for i, v := range p {
		f := float64(i) * df
		if f >= lo && f <= hi && v > best {
			best, at = v, f
		}
	}
	return at
}

// lineProminence is how many dB the strongest bin inside [wlo, whi] Hz
// stands above the median bin between lo and hi Hz.
func lineProminence(p []float64, df, lo, hi, wlo, whi float64) float64 {
	var band []float64
	in := 0.0
	for i, v := range p {
		f := float64(i) * df
		if f >= lo && f <= hi {
			band = append(band, v)
			if f >= wlo && f <= whi {
				in = math.Max(in, v)
			}
		}
	}
	sort.Float64s(band)
	return 10 * math.Log10(in/band[len(band)/2])
}

// The strongest tonal line of each near-field recording is the one the
// machine physics puts there: vane pass of the pump, blade pass of the fan,
// first gear mesh of the conveyor, at the condition's speed within the
// wander band (BPF = N·fr; GMF = Z·f_shaft; Randall 2011, from memory).
// Farther away the room's reflections colour the lines (a line can sit in
// a comb notch), so there the expected line need only stand clear of the
// spectrum: at least 15 dB above its median.
func TestStrongestLine(t *testing.T) {
	p, dir := demoPlant(t)
	const n = 4096
	df := float64(p.SampleRate) / n
	takes, err := plan(p)
	if err != nil {
		t.Fatal(err)
	}
	nearTakes, others := 0, 0
	for _, tk := range takes {
		if tk.background || tk.fault != "" {
			continue
		}
		m, c := tk.m, tk.c
		lo, hi := c.Band()
		var order float64
		switch m.ID {
		case "pump-p1", "fan-f1":
			order = m.BladePass(1)
		case "conveyor-c1":
			order = m.MeshHz(1)[0]
		default:
			t.Fatalf("no expected line for %s", m.ID)
		}
		want := order * machine.ShaftHz(c.RPM)
		wlo, whi := order*machine.ShaftHz(lo)-1.5*df, order*machine.ShaftHz(hi)+1.5*df
		ps := welch(readWAV(t, filepath.Join(dir, filepath.FromSlash(tk.path))), n)
		if tk.dist == near {
			nearTakes++
			if got := peakHz(ps, n, float64(p.SampleRate), 20, 3000); got < wlo || got > whi {
				t.Errorf("%s: strongest line at %.1f Hz, want %.1f Hz (%.1f … %.1f)", tk.path, got, want, wlo, whi)
			}
		} else {
			others++
			if pr := lineProminence(ps, df, 20, 3000, wlo, whi); pr < 15 {
				t.Errorf("%s: line at %.1f Hz only %.1f dB above the median", tk.path, want, pr)
			}
		}
	}
	if nearTakes != 12 || others != 21 {
		t.Errorf("checked %d near and %d other takes, want 12 and 21", nearTakes, others)
	}
}

// Each machine's anomalous recordings carry their fault's impacts: the
// squared envelope of the band an impact rings has a line at the impact
// rate (Randall & Antoni 2011: envelope analysis of the band an impact
// rings), at least 20× the median of 20 … 1000 Hz, where the normal near
// take of the same condition has none above 10×. The rates: BPFO of the
// pump's drive-end bearing and BPFI of the conveyor's motor-shaft bearing
// less slip, the fan's shaft rate (one tip strike per revolution), within
// the condition's speed band and three jitter deviations.
func TestAnomalousEnvelope(t *testing.T) {
	p, dir := demoPlant(t)
	const n = 4096
	df := float64(p.SampleRate) / n
	for _, tc := range []struct {
		machine, cond, file string
		resHz               float64
		order               func(m *machine.Machine) float64 // impact rate per input shaft Hz
		slip, jitter        float64
	}{
		{"pump-p1", "duty", "outer-race-01.wav", faultResonanceHz,
			func(m *machine.Machine) float64 { return m.Bearings[0].Orders().BPFO }, faultSlip, faultJitter},
		{"pump-p1", "duty", "outer-race-02.wav", faultResonanceHz,
			func(m *machine.Machine) float64 { return m.Bearings[0].Orders().BPFO }, faultSlip, faultJitter},
		{"conveyor-c1", "full", "inner-race-01.wav", innerRaceHz,
			func(m *machine.Machine) float64 { return m.Bearings[0].Orders().BPFI }, faultSlip, faultJitter},
		{"conveyor-c1", "full", "inner-race-02.wav", innerRaceHz,
			func(m *machine.Machine) float64 { return m.Bearings[0].Orders().BPFI }, faultSlip, faultJitter},
		{"fan-f1", "high", "blade-rub-01.wav", rubResonanceHz,
			func(*machine.Machine) float64 { return 1 }, 0, rubJitter},
		{"fan-f1", "high", "blade-rub-02.wav", rubResonanceHz,
			func(*machine.Machine) float64 { return 1 }, 0, rubJitter},
	} {
		m := p.Machine(tc.machine)
		c := m.Condition(tc.cond)
		lo, hi := c.Band()
		order := tc.order(m)
		wlo := order*machine.ShaftHz(lo)*(1-tc.slip-3*tc.jitter) - 1.5*df
		whi := order*machine.ShaftHz(hi)*(1-tc.slip+3*tc.jitter) + 1.5*df
		prominence := func(path string) float64 {
			x := readWAV(t, path)
			bandpass(tc.resHz, 2, float64(p.SampleRate)).run(x)
			mean := 0.0
			for i, v := range x {
				x[i] = v * v
				mean += x[i]
			}
			mean /= float64(len(x))
			for i := range x {
				x[i] -= mean
			}
			return lineProminence(welch(x, n), df, 20, 1000, wlo, whi)
		}
		base := filepath.Join(dir, "recordings", tc.machine, tc.cond)
		if pr := prominence(filepath.Join(base, machine.AnomalousDir, tc.file)); pr < 13 {
			t.Errorf("%s/%s: envelope line in %.1f … %.1f Hz %.1f dB above the median, want ≥ 13 dB (20×)", tc.machine, tc.file, wlo, whi, pr)
		}
		if pr := prominence(filepath.Join(base, "take-01.wav")); pr > 10 {
			t.Errorf("%s/%s/take-01.wav: envelope line in %.1f … %.1f Hz %.1f dB above the median, want no clear line (≤ 10 dB)", tc.machine, tc.cond, wlo, whi, pr)
		}
	}
}

func TestDeterministic(t *testing.T) {
	a, b, c := t.TempDir(), t.TempDir(), t.TempDir()
	for _, d := range []struct {
		dir  string
		seed uint64
	}{{a, 11}, {b, 11}, {c, 12}} {
		if _, err := Write(d.dir, Options{Seed: d.seed, Seconds: 2}); err != nil {
			t.Fatal(err)
		}
	}
	fa, fb := files(t, a), files(t, b)
	if strings.Join(fa, ",") != strings.Join(fb, ",") {
		t.Fatalf("file lists differ")
	}
	for _, f := range fa {
		x, _ := os.ReadFile(filepath.Join(a, f))
		y, _ := os.ReadFile(filepath.Join(b, f))
		z, _ := os.ReadFile(filepath.Join(c, f))
		if !bytes.Equal(x, y) {
			t.Errorf("%s differs between two writes with one seed", f)
		}
		if bytes.Equal(x, z) {
			t.Errorf("%s is the same for seeds 11 and 12", f)
		}
	}
	// A rerun into the same folder is fine and leaves the same bytes.
	if _, err := Write(a, Options{Seed: 11, Seconds: 2}); err != nil {
		t.Errorf("rerun: %v", err)
	}
	x, _ := os.ReadFile(filepath.Join(a, fa[0]))
	y, _ := os.ReadFile(filepath.Join(b, fa[0]))
	if !bytes.Equal(x, y) {
		t.Error("rerun changed a file")
	}
}

func TestExisting(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "plant.toml")
	if err := os.WriteFile(path, []byte("# my real plant\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Write(dir, Options{Seconds: 1})
	if !errors.Is(err, ErrExists) {
		t.Fatalf("Write over a different plant.toml: %v, want ErrExists", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "# my real plant\n" {
		t.Fatal("plant.toml was changed")
	}
	if _, err := Write(dir, Options{Seconds: 1, Overwrite: true}); err != nil {
		t.Fatalf("Overwrite: %v", err)
	}
}

func TestOptionsInvalid(t *testing.T) {
	for _, o := range []Options{
		{Seconds: -1}, {Seconds: 0.5}, {Seconds: 601}, {Seconds: math.NaN()}, {Seconds: math.Inf(1)},
		{Seed: math.MaxInt64 + 1},
	} {
		dir := t.TempDir()
		_, err := Write(dir, o)
		if err == nil || !strings.HasPrefix(err.Error(), "demoplant: ") {
			t.Errorf("Write(%+v) = %v, want a demoplant error", o, err)
		}
		if ents, _ := os.ReadDir(dir); len(ents) != 0 {
			t.Errorf("Write(%+v) left %d entries", o, len(ents))
		}
	}
}

// Every tonal line is an exact order of the shaft phase: with a constant
// speed, addTones gives amp·sin(order·ω·k + phase) at every sample.
func TestAddTonesLocked(t *testing.T) {
	const n = 1000
	om := make([]float64, (n+block-1)/block)
	for i := range om {
		om[i] = 0.031
	}
	tones := []tone{{1, 0.5, 0.3}, {5, 0.2, 1}, {19.5, 0.1, 2}, {2.25, 0.3, 0}, {7, 0.05, 4}}
	got := make([]float64, n)
	addTones(got, tones, 0.7, om)
	for k := range got {
		want := 0.0
		for _, tn := range tones {
			want += tn.amp * math.Sin(tn.order*(0.7+0.031*float64(k))+tn.phase)
		}
		if math.Abs(got[k]-want) > 1e-9 {
			t.Fatalf("sample %d: %g, want %g", k, got[k], want)
		}
	}
}

// The speed never leaves the condition's band: |offset + wander| ≤ 0.35
// of the band.
func TestSpeedTrackInBand(t *testing.T) {
	s := &synth{rate: 16000}
	for seed := uint64(0); seed < 50; seed++ {
		rng := rand.New(rand.NewPCG(seed, 1))
		f0, band := 49.3, 0.015
		om := s.speedTrack(rng, 16000*30, f0, band)
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, w := range om {
			f := w * s.rate / (2 * math.Pi)
			lo, hi = math.Min(lo, f), math.Max(hi, f)
		}
		if lo < f0*(1-0.35*band)-1e-9 || hi > f0*(1+0.35*band)+1e-9 {
			t.Errorf("seed %d: speed %g … %g Hz outside %g ± %g %%", seed, lo, hi, f0, 35*band)
		}
		if hi-lo < 0.05*f0*band {
			t.Errorf("seed %d: speed barely wanders (%g … %g Hz)", seed, lo, hi)
		}
	}
}

func BenchmarkWrite(b *testing.B) {
	for i := 0; i < b.N; i++ {
		if _, err := Write(b.TempDir(), Options{}); err != nil {
			b.Fatal(err)
		}
	}
}
