package machine

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine/wavio"
)

// qtone is a 1 s tone of period 40 samples at amplitude amp plus dc.
func qtone(amp, dc float64) []float64 {
	x := make([]float64, 16000)
	for i := range x {
		x[i] = dc + amp*math.Sin(2*math.Pi*float64(i)/40+0.3)
	}
	return x
}

// clampAt clips x to ±lim, as an overdriven input stage does.
func clampAt(x []float64, lim float64) []float64 {
	for i := range x {
		x[i] = math.Max(-lim, math.Min(lim, x[i]))
	}
	return x
}

// withRuns overwrites n runs of length k at value v, one every 400 samples.
func withRuns(x []float64, n, k int, v float64) []float64 {
	for r := 0; r < n; r++ {
		for j := 0; j < k; j++ {
			x[r*400+100+j] = v
		}
	}
	return x
}

func ptr[T any](v T) *T { return &v }

// The gate's thresholds are common practice (see the Default constants):
// clipped > 0.1 % of samples in flat tops of ≥ 3 samples within 1 dB of
// full scale, |DC| > 0.05, RMS < −70 dBFS. Each case states the measure it
// trips and is checked against the default and against changed thresholds.
func TestQualityGate(t *testing.T) {
	def := (*Quality)(nil).Thresholds()
	loose := (&Quality{MaxClippedPercent: ptr(90.0), MaxDC: ptr(0.5), MinRMSDBFS: ptr(-120.0)}).Thresholds()
	cases := []struct {
		name    string
		x       []float64
		ch      int
		th      Thresholds
		kind    string  // "" = passes
		clipped float64 // expected clipped fraction, when ≥ 0
	}{
		{"clean tone", qtone(0.5, 0), 1, def, "", 0},
		// amplitude 2 clipped at ±1: every sample with |sin| ≥ 0.5 is flat
		{"clipped at full scale", clampAt(qtone(2, 0), 1), 1, def, GateClipped, -1},
		{"clipped, loose threshold", clampAt(qtone(2, 0), 1), 1, loose, "", -1},
		// 20 runs of 5 samples at +1 in 16000 samples: 100/16000 = 0.625 %
		{"flat tops counted exactly", withRuns(qtone(0.5, 0), 20, 5, 1), 1, def, GateClipped, 100.0 / 16000},
		// runs of 2 are chance, not clipping (clip_run 3) …
		{"runs of two", withRuns(qtone(0.5, 0), 20, 2, 1), 1, def, "", 0},
		// … unless the plant says clip_run = 2
		{"runs of two, clip_run 2", withRuns(qtone(0.5, 0), 20, 2, 1), 1, Thresholds{0.1, 2, -1, 0.05, -70}, GateClipped, 40.0 / 16000},
		// clipped then normalised to −0.5 dBFS: still within 1 dB of full scale
		{"normalised flat tops", clampAt(qtone(2, 0), 0.944), 1, def, GateClipped, -1},
		// flat tops at −6 dBFS are below clip_level_dbfs −1: not counted
		{"flat tops well below full scale", clampAt(qtone(2, 0), 0.5), 1, def, "", 0},
		{"same, clip_level_dbfs −12", clampAt(qtone(2, 0), 0.5), 1, Thresholds{0.1, 3, -12, 0.05, -70}, GateClipped, -1},
		// flat tops only in the second channel of a stereo take
		{"stereo, one channel clipped", interleave(qtone(0.5, 0), clampAt(qtone(2, 0), 1)), 2, def, GateClipped, -1},
		{"dc 0.08", qtone(0.3, 0.08), 1, def, GateDC, 0},
		{"dc -0.08", qtone(0.3, -0.08), 1, def, GateDC, 0},
		{"dc 0.03 passes", qtone(0.3, 0.03), 1, def, "", 0},
		{"dc 0.08, max_dc 0.5", qtone(0.3, 0.08), 1, loose, "", 0},
		// amplitude 1e-4: RMS −83 dBFS
		{"quiet", qtone(1e-4, 0), 1, def, GateQuiet, 0},
		{"quiet, floor −120", qtone(1e-4, 0), 1, loose, "", 0},
		// amplitude 1e-3: RMS −63 dBFS, above the floor
		{"soft passes", qtone(1e-3, 0), 1, def, "", 0},
		// sensor data in g beyond ±1: full scale is its peak; saturation
		// (flat tops at the peak) is clipping, a clean record is not
		{"sensor record", qtone(3.6, 0), 1, def, "", 0},
		{"saturated sensor", clampAt(qtone(7.2, 0), 3.6), 1, def, GateClipped, -1},
		{"sensor dc relative to peak", qtone(3.6, 0.036), 1, def, "", 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			q := MeasureQuality(c.x, c.ch, c.th)
			e := c.th.Gate(q)
			switch {
			case c.kind == "" && e != nil:
				t.Errorf("excluded: %v (stats %+v)", e, q)
			case c.kind != "" && (e == nil || e.Kind != c.kind):
				t.Errorf("gate %v, want %s (stats %+v)", e, c.kind, q)
			}
			if c.clipped >= 0 && math.Abs(q.Clipped-c.clipped) > 1e-12 {
				t.Errorf("clipped %g, want %g", q.Clipped, c.clipped)
			}
			if e != nil && !strings.Contains(e.Error(), "quality.") {
				t.Errorf("message %q does not name the plant key", e.Error())
			}
		})
	}
}

func interleave(a, b []float64) []float64 {
	out := make([]float64, 0, 2*len(a))
	for i := range a {
		out = append(out, a[i], b[i])
	}
	return out
}

// Scan applies the gate to every recording: an excluded one is a problem
// of its kind and not used, unless [[quality.accept]] names it; the survey
// row counts it and names the worst file.
func TestScanQualityGateAndAccept(t *testing.T) {
	dir := t.TempDir()
	takes := map[string][]float64{
		"good.wav":     qtone(0.3, 0),
		"clipped.wav":  clampAt(qtone(2, 0), 1),
		"accepted.wav": clampAt(qtone(3, 0), 1),
		"offset.wav":   qtone(0.3, 0.1),
		"quiet.wav":    qtone(1e-4, 0),
	}
	for name, x := range takes {
		p := filepath.Join(dir, "recordings", "pump-a1", "full-load", name)
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := wavio.WriteFile(p, x, 16000, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
	}
	src, err := os.ReadFile("../testdata/plant/minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	src = append(src, []byte(`
[quality]
max_dc = 0.04
[[quality.accept]]
path = "pump-a1/full-load/accepted.wav"
reason = "the only take at this load; the clipping is on transients"
`)...)
	os.WriteFile(filepath.Join(dir, "plant.toml"), src, 0o644)
	p, err := Load(filepath.Join(dir, "plant.toml"))
	if err != nil {
		t.Fatal(err)
	}
	p.ClipSeconds = 1
	inv, err := Scan(context.Background(), p, ScanOptions{Levels: true})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]string{"good.wav": "", "accepted.wav": "", "clipped.wav": GateClipped, "offset.wav": GateDC, "quiet.wav": GateQuiet}
	for _, r := range inv.Recordings {
		name := filepath.Base(r.Rel)
		kind, _, excluded := r.Exclusion()
		if kind != want[name] || excluded == r.Usable() {
			t.Errorf("%s: exclusion %q (usable %v), want %q", name, kind, r.Usable(), want[name])
		}
		if name == "accepted.wav" && (r.Accepted == "" || !strings.Contains(r.AcceptedOver, "flat tops")) {
			t.Errorf("accepted.wav: accepted %q over %q", r.Accepted, r.AcceptedOver)
		}
	}
	kinds := map[string]bool{}
	for _, pr := range inv.Problems {
		kinds[pr.Kind] = true
		if strings.Contains(pr.Path, "accepted") || strings.Contains(pr.Path, "good") {
			t.Errorf("problem for a usable recording: %v", pr)
		}
	}
	for _, k := range []string{GateClipped, GateDC, GateQuiet} {
		if !kinds[k] {
			t.Errorf("no %s problem in %v", k, inv.Problems)
		}
	}
	s := Summarise(inv)
	row := s.Rows[0]
	if row.Excluded != 3 || row.Worst != "pump-a1/full-load/accepted.wav" {
		t.Errorf("row: excluded %d worst %q, want 3 and the accepted take (most clipped)", row.Excluded, row.Worst)
	}
	var sb strings.Builder
	if err := s.WriteText(&sb); err != nil {
		t.Fatal(err)
	}
	for _, w := range []string{"accepted: pump-a1/full-load/accepted.wav", "|DC| ≤ 0.04", "pump-a1/full-load/accepted.wav ("} {
		if !strings.Contains(sb.String(), w) {
			t.Errorf("survey text lacks %q:\n%s", w, sb.String())
		}
	}
	sb.Reset()
	if err := s.WriteJSON(&sb); err != nil {
		t.Fatal(err)
	}
}

func TestQualityConfigErrors(t *testing.T) {
	cases := []struct{ toml, key string }{
		{"[quality]\nclip_run = 0", "quality.clip_run"},
		{"[quality]\nmax_clipped_percent = 120.0", "quality.max_clipped_percent"},
		{"[quality]\nclip_level_dbfs = 3.0", "quality.clip_level_dbfs"},
		{"[quality]\nmax_dc = -0.1", "quality.max_dc"},
		{"[quality]\nmin_rms_dbfs = 10.0", "quality.min_rms_dbfs"},
		{"[[quality.accept]]\npath = \"a/b.wav\"", "quality.accept[0].reason"},
		{"[[quality.accept]]\npath = \"../x.wav\"\nreason = \"r\"", "quality.accept[0].path"},
		{"[[quality.accept]]\nreason = \"r\"", "quality.accept[0].path"},
	}
	for _, c := range cases {
		_, err := Parse([]byte(minimalTOML(t)+"\n"+c.toml+"\n"), "plant.toml")
		if err == nil || !strings.Contains(err.Error(), c.key) {
			t.Errorf("%q: error %v, want one naming %s", c.toml, err, c.key)
		}
	}
}
