package machine

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"thrum/machine/wavio"
)

// ingestPlant writes the minimal plant with extra machine keys, creates
// the recordings with write, and scans it with 1 s clips.
func ingestPlant(t *testing.T, machineKeys string, write func(rec string)) *Inventory {
	t.Helper()
	dir := t.TempDir()
	src, err := os.ReadFile("../testdata/plant/minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	toml := strings.Replace(string(src), "recipe = \"basic\"\n  [[machine.bearing]]", "recipe = \"basic\"\n"+machineKeys+"\n  [[machine.bearing]]", 1)
	if err := os.WriteFile(filepath.Join(dir, "plant.toml"), []byte(toml), 0o644); err != nil {
		t.Fatal(err)
	}
	write(filepath.Join(dir, "recordings", "pump-a1"))
	p, err := Load(filepath.Join(dir, "plant.toml"))
	if err != nil {
		t.Fatal(err)
	}
	p.ClipSeconds = 1
	inv, err := Scan(context.Background(), p, ScanOptions{Levels: true})
	if err != nil {
		t.Fatal(err)
	}
	return inv
}

func writeWAV(t *testing.T, path string, x []float64, rate, ch int) {
	t.Helper()
	os.MkdirAll(filepath.Dir(path), 0o755)
	if err := wavio.WriteFile(path, x, rate, ch, wavio.PCM16); err != nil {
		t.Fatal(err)
	}
}

// tones returns n frames at rate fs of Σ amp·sin(2π f t), one (f, amp)
// pair after another.
func tones(n int, fs float64, fa ...float64) []float64 {
	x := make([]float64, n)
	for i := range x {
		for k := 0; k+1 < len(fa); k += 2 {
			x[i] += fa[k+1] * math.Sin(2*math.Pi*fa[k]*float64(i)/fs)
		}
	}
	return x
}

// toneAmp fits a·cos + b·sin at f Hz to x by least squares and returns the
// amplitude.
func toneAmp(x []float64, f, fs float64) float64 {
	var cc, ss, cs, yc, ys float64
	for i, y := range x {
		c, s := math.Cos(2*math.Pi*f*float64(i)/fs), math.Sin(2*math.Pi*f*float64(i)/fs)
		cc, ss, cs, yc, ys = cc+c*c, ss+s*s, cs+c*s, yc+y*c, ys+y*s
	}
	det := cc*ss - cs*cs
	return math.Hypot((yc*ss-ys*cs)/det, (ys*cc-yc*cs)/det)
}

func byRel(inv *Inventory) map[string]*Recording {
	m := map[string]*Recording{}
	for _, r := range inv.Recordings {
		m[r.Rel] = r
	}
	return m
}

func clipsOf(t *testing.T, r *Recording) [][]float64 {
	t.Helper()
	var out [][]float64
	if err := r.ReadClips(func(c Clip, x []float64) error {
		out = append(out, append([]float64(nil), x...))
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	return out
}

// Recordings at other rates are resampled to the working rate with the
// exact ratio (48 kHz → 16 kHz is 1/3, 44.1 kHz → 16 kHz 160/441, 12 kHz
// → 16 kHz 4/3), and every clip of the machine is low-passed to the
// narrowest source band, 0.45 × 12 kHz = 5400 Hz: a tone at 1 kHz keeps its
// level, one at 7 kHz (present only where the source rate allows) is gone.
func TestScanResamplesAndHarmonisesBandwidth(t *testing.T) {
	inv := ingestPlant(t, "", func(root string) {
		c := filepath.Join(root, "full-load")
		writeWAV(t, filepath.Join(c, "native.wav"), tones(3*16000, 16000, 1000, 0.3, 7000, 0.3), 16000, 1)
		writeWAV(t, filepath.Join(c, "studio.wav"), tones(3*48000, 48000, 1000, 0.3, 7000, 0.3, 12000, 0.3), 48000, 1)
		writeWAV(t, filepath.Join(c, "cd.wav"), tones(3*44100, 44100, 1000, 0.3, 7000, 0.3), 44100, 1)
		writeWAV(t, filepath.Join(root, "part-load", "logger.wav"), tones(3*12000, 12000, 1000, 0.3), 12000, 1)
	})
	by := byRel(inv)
	for _, c := range []struct {
		rel      string
		resample string
		lowpass  bool
	}{
		{"pump-a1/full-load/native.wav", "", true},
		{"pump-a1/full-load/studio.wav", "1/3", true},
		{"pump-a1/full-load/cd.wav", "160/441", true},
		{"pump-a1/part-load/logger.wav", "4/3", false},
	} {
		r := by[c.rel]
		if r == nil || !r.Usable() {
			t.Fatalf("%s: not usable: %+v (problems %v)", c.rel, r, inv.Problems)
		}
		if r.Resample != c.resample || r.Lowpass != c.lowpass || r.BandwidthHz != 5400 || len(r.Clips) != 3 {
			t.Errorf("%s: resample %q lowpass %v bandwidth %v clips %d; want %q %v 5400 3", c.rel, r.Resample, r.Lowpass, r.BandwidthHz, len(r.Clips), c.resample, c.lowpass)
		}
		clips := clipsOf(t, r)
		if len(clips) != 3 {
			t.Fatalf("%s: %d clips", c.rel, len(clips))
		}
		x := clips[1] // away from the recording's ends
		if len(x) != 16000 {
			t.Fatalf("%s: clip of %d samples", c.rel, len(x))
		}
		if a := toneAmp(x, 1000, 16000); math.Abs(20*math.Log10(a/0.3)) > 0.01 {
			t.Errorf("%s: 1 kHz at %.5f, want 0.3 ± 0.01 dB", c.rel, a)
		}
		// 7 kHz lies beyond 5400/0.9 = 6000 Hz, the low-pass stopband; 80
		// dB below 0.3 is 3e-5 (the design rule), PCM16 noise is far lower.
		if a := toneAmp(x, 7000, 16000); a > 3e-5 {
			t.Errorf("%s: 7 kHz left at %.2g, want ≤ 3e-5", c.rel, a)
		}
	}
	s := Summarise(inv)
	if got := ints(s.Rows[0].SampleRates); got != "16000,44100,48000" {
		t.Errorf("survey rates %s", got)
	}
	var b strings.Builder
	s.WriteText(&b)
	if !strings.Contains(b.String(), "pump-a1: every clip low-passed to 5400 Hz") {
		t.Errorf("survey does not show the harmonised bandwidth:\n%s", b.String())
	}
}

// When no source is at a lower rate the band is the resampler's own and
// nothing else filters; clip by clip conversion gives exactly the samples
// of converting the whole recording.
func TestResampledClipsMatchWholeConversion(t *testing.T) {
	x := tones(3*48000+123, 48000, 440, 0.2, 3000, 0.1, 9000, 0.1)
	inv := ingestPlant(t, "", func(root string) {
		writeWAV(t, filepath.Join(root, "full-load", "a.wav"), x, 48000, 1)
	})
	r := byRel(inv)["pump-a1/full-load/a.wav"]
	if r == nil || r.Lowpass || r.Resample != "1/3" || r.BandwidthHz != 7200 {
		t.Fatalf("recording %+v", r)
	}
	a, err := wavio.ReadFile(r.Path)
	if err != nil {
		t.Fatal(err)
	}
	whole := Resample(nil, a.Data, 48000, 16000)
	if r.WorkFrames() != int64(len(whole)) {
		t.Fatalf("WorkFrames %d, whole conversion %d", r.WorkFrames(), len(whole))
	}
	// ReadSpan (a speed change's source) reads the same working-rate samples.
	span, err := r.ReadSpan(nil, 12345, 7000)
	if err != nil {
		t.Fatal(err)
	}
	for k, v := range span {
		if v != whole[12345+k] {
			t.Fatalf("span sample %d: %v, whole conversion %v", k, v, whole[12345+k])
		}
	}
	for i, c := range clipsOf(t, r) {
		for k, v := range c {
			if v != whole[i*16000+k] {
				t.Fatalf("clip %d sample %d: %v, whole conversion %v", i, k, v, whole[i*16000+k])
			}
		}
	}
}

// Channel modes on a two-channel take: the mean, one channel, or each
// channel as its own stream in the take's split group.
func TestChannelModes(t *testing.T) {
	const n = 2 * 16000
	l, r := tones(n, 16000, 1000, 0.2), tones(n, 16000, 2000, 0.4)
	st := make([]float64, 2*n)
	for i := range l {
		st[2*i], st[2*i+1] = l[i], r[i]
	}
	write := func(root string) { writeWAV(t, filepath.Join(root, "full-load", "pair.wav"), st, 16000, 2) }
	ref, err := wavio.ReadFile(filepath.Join(func() string { d := t.TempDir(); write(d); return d }(), "full-load", "pair.wav"))
	if err != nil {
		t.Fatal(err)
	}
	ch := func(k int) []float64 {
		out := make([]float64, n)
		for i := range out {
			out[i] = ref.Data[2*i+k]
		}
		return out
	}
	mean := make([]float64, n)
	for i := range mean {
		mean[i] = (ref.Data[2*i] + ref.Data[2*i+1]) * 0.5
	}
	same := func(name string, got [][]float64, want []float64) {
		for i, c := range got {
			for k, v := range c {
				if v != want[i*16000+k] {
					t.Fatalf("%s: clip %d sample %d: %v, want %v", name, i, k, v, want[i*16000+k])
				}
			}
		}
	}
	const rel = "pump-a1/full-load/pair.wav"
	for _, c := range []struct {
		keys string
		rels []string
		want [][]float64
	}{
		{"", []string{rel}, [][]float64{mean}},
		{`channels = "mean"`, []string{rel}, [][]float64{mean}},
		{`channels = "2"`, []string{rel}, [][]float64{ch(1)}},
		{`channels = "each"`, []string{rel + "#ch1", rel + "#ch2"}, [][]float64{ch(0), ch(1)}},
	} {
		inv := ingestPlant(t, c.keys, write)
		by := byRel(inv)
		if len(inv.Recordings) != len(c.rels) {
			t.Fatalf("%q: %d recordings, want %d", c.keys, len(inv.Recordings), len(c.rels))
		}
		for k, rl := range c.rels {
			rec := by[rl]
			if rec == nil || !rec.Usable() || rec.Group != rel {
				t.Fatalf("%q: recording %s: %+v", c.keys, rl, rec)
			}
			same(c.keys+" "+rl, clipsOf(t, rec), c.want[k])
		}
	}
	inv := ingestPlant(t, `channels = "3"`, write)
	bad := 0
	for _, p := range inv.Problems {
		if p.Kind == "bad-channel" && p.Path == rel {
			bad++
		}
	}
	if r := byRel(inv)[rel]; r == nil || r.Usable() || bad != 1 {
		t.Errorf("channel 3 of a two-channel file: %+v, problems %v", r, inv.Problems)
	}
}

// A condition can override the machine's channel mode.
func TestChannelModePerCondition(t *testing.T) {
	m := Machine{Channels: "each", Conditions: []Condition{{Name: "a"}, {Name: "b", Channels: "1"}}}
	for _, c := range []struct {
		cond *Condition
		want string
	}{{&m.Conditions[0], "each"}, {&m.Conditions[1], "1"}, {nil, "each"}} {
		if got := m.ChannelMode(c.cond); got != c.want {
			t.Errorf("ChannelMode(%v) = %q, want %q", c.cond, got, c.want)
		}
	}
	if got := (&Machine{}).ChannelMode(nil); got != ChannelsMean {
		t.Errorf("default mode %q", got)
	}
	for _, bad := range []string{"0", "-1", "both", "65", "1.5"} {
		if _, _, err := ParseChannels(bad); err == nil {
			t.Errorf("ParseChannels(%q) accepted", bad)
		}
	}
}

// FLAC recordings are scanned like WAV (hash of the file's bytes, levels,
// resampling); other files in the tree are unknown formats, reported;
// hidden files are skipped.
func TestScanFLACAndUnknownFormats(t *testing.T) {
	flacFile := filepath.Join("wavio", "testdata", "flac", "s24-stereo.flac")
	b, err := os.ReadFile(flacFile)
	if err != nil {
		t.Fatal(err)
	}
	inv := ingestPlant(t, "", func(root string) {
		c := filepath.Join(root, "full-load")
		os.MkdirAll(c, 0o755)
		os.WriteFile(filepath.Join(c, "take.FLAC"), b, 0o644)
		os.WriteFile(filepath.Join(c, "take-notes.txt"), []byte("notes"), 0o644)
		os.WriteFile(filepath.Join(c, "take.mp3"), []byte("ID3"), 0o644)
		os.WriteFile(filepath.Join(c, ".DS_Store"), []byte{0}, 0o644)
		os.MkdirAll(filepath.Join(c, ".git"), 0o755)
		os.WriteFile(filepath.Join(c, ".git", "HEAD"), []byte("x"), 0o644)
	})
	r := byRel(inv)["pump-a1/full-load/take.FLAC"]
	sum, _ := HashFile(flacFile)
	if r == nil || r.Format.Codec != wavio.CodecFLAC || r.SHA256 != sum || r.Resample != "1/3" || r.Levels == nil {
		t.Fatalf("FLAC recording %+v", r)
	}
	unknown := map[string]bool{}
	for _, p := range inv.Problems {
		if p.Kind == "unknown-format" {
			unknown[p.Path] = true
			if !strings.Contains(p.Msg, ".wav, .flac") {
				t.Errorf("no hint in %q", p.Msg)
			}
		}
		if strings.Contains(p.Path, "/.") {
			t.Errorf("hidden file reported: %v", p)
		}
	}
	if !unknown["pump-a1/full-load/take-notes.txt"] || !unknown["pump-a1/full-load/take.mp3"] || len(unknown) != 2 {
		t.Errorf("unknown formats %v", unknown)
	}
}

// bandwidth_hz sets the band explicitly, even when every recording is at
// the working rate.
func TestBandwidthKey(t *testing.T) {
	inv := ingestPlant(t, "bandwidth_hz = 4000", func(root string) {
		writeWAV(t, filepath.Join(root, "full-load", "a.wav"), tones(2*16000, 16000, 1000, 0.3, 6000, 0.3), 16000, 1)
	})
	r := byRel(inv)["pump-a1/full-load/a.wav"]
	if r == nil || !r.Lowpass || r.BandwidthHz != 4000 {
		t.Fatalf("recording %+v", r)
	}
	x := clipsOf(t, r)[1]
	if a := toneAmp(x, 6000, 16000); a > 3e-5 {
		t.Errorf("6 kHz left at %.2g with bandwidth_hz 4000", a)
	}
	if a := toneAmp(x, 1000, 16000); math.Abs(20*math.Log10(a/0.3)) > 0.01 {
		t.Errorf("1 kHz at %.5f", a)
	}
}

// A run of clips read on its own (ReadClipsOf, as a job of a long
// recording does) gives each clip the samples ReadClips gives it, whether
// the file is read as it is, seeked in, or resampled and low-passed.
func TestReadClipsOfMatchesReadClips(t *testing.T) {
	inv := ingestPlant(t, "", func(root string) {
		c := filepath.Join(root, "full-load")
		writeWAV(t, filepath.Join(c, "native.wav"), tones(7*16000+77, 16000, 440, 0.3, 3000, 0.1), 16000, 1)
		writeWAV(t, filepath.Join(c, "stereo.wav"), tones(2*(6*16000+5), 16000, 700, 0.2), 16000, 2)
		writeWAV(t, filepath.Join(c, "fast.wav"), tones(6*48000+123, 48000, 440, 0.2, 9000, 0.1), 48000, 1)
		writeWAV(t, filepath.Join(c, "slow.wav"), tones(5*12000+9, 12000, 300, 0.2), 12000, 1)
	})
	// alone at the working rate, a file is read as it is (no conversion)
	plain := ingestPlant(t, "", func(root string) {
		writeWAV(t, filepath.Join(root, "full-load", "plain.wav"), tones(7*16000+77, 16000, 440, 0.3, 3000, 0.1), 16000, 1)
	})
	if r := byRel(plain)["pump-a1/full-load/plain.wav"]; r == nil || r.converted() {
		t.Fatalf("plain recording %+v is converted", r)
	}
	for _, rel := range []string{"plain.wav", "native.wav", "stereo.wav", "fast.wav", "slow.wav"} {
		t.Run(rel, func(t *testing.T) {
			r := byRel(inv)["pump-a1/full-load/"+rel]
			if rel == "plain.wav" {
				r = byRel(plain)["pump-a1/full-load/"+rel]
			}
			if r == nil || len(r.Clips) < 4 {
				t.Fatalf("recording %s: %+v", rel, r)
			}
			want := clipsOf(t, r)
			for _, run := range [][2]int{{0, 1}, {1, 3}, {2, len(r.Clips)}, {len(r.Clips) - 1, len(r.Clips)}} {
				i := run[0]
				err := r.ReadClipsOf(r.Clips[run[0]:run[1]], func(c Clip, x []float64) error {
					if c.Index != r.Clips[i].Index {
						t.Errorf("run %v: clip %d, want %d", run, c.Index, r.Clips[i].Index)
					}
					if !slices.Equal(x, want[i]) {
						t.Errorf("run %v: clip %d differs from ReadClips'", run, c.Index)
					}
					i++
					return nil
				})
				if err != nil {
					t.Fatal(err)
				}
				if i != run[1] {
					t.Errorf("run %v: %d clips, want %d", run, i-run[0], run[1]-run[0])
				}
			}
		})
	}
}
