package machine

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"math/cmplx"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"thrum/machine/realdata"

	"thrum/machine/dsp"
	"thrum/machine/wavio"
)

// Tests on measured recordings kept beside the repository (realdata/, with
// READMEs naming their sources); each skips when the folder is absent.

// realPlant writes a plant.toml in a temp folder whose recordings are
// symlinks to real files: files maps a recordings-relative path to a file.
func realPlant(t testing.TB, toml string, files map[string]string) *Plant {
	t.Helper()
	dir := t.TempDir()
	for rel, src := range files {
		p := filepath.Join(dir, "recordings", filepath.FromSlash(rel))
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := os.Symlink(src, p); err != nil {
			t.Skipf("cannot link %s: %v", src, err)
		}
	}
	if err := os.WriteFile(filepath.Join(dir, "plant.toml"), []byte(toml), 0o644); err != nil {
		t.Fatal(err)
	}
	p, err := Load(filepath.Join(dir, "plant.toml"))
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// The MIMII array files (8 channels, 16 bit, 16 kHz, 10 s, per their
// README) through each channel mode: mean is one stream, "N" one channel,
// each eight streams in one split group; channel 1 equals the README's
// bit-exact mono extraction of channel 0; durations and RMS levels agree
// with numpy's reading when the system python3 has numpy.
func TestRealArrayChannelModes(t *testing.T) {
	dir := realdata.Dir(t, "mimii-machine-sound")
	const plantTOML = `seed = 1
sample_rate = 16000
recordings = "recordings"
clip_seconds = 10

[[machine]]
id = "fan-1"
kind = "fan"
channels = "%s"
  [[machine.condition]]
  name = "normal"
  rpm = 1500
  band_percent = 2
`
	files := map[string]string{"fan-1/normal/fn444.wav": filepath.Join(dir, "fn444.wav")}
	mono, err := wavio.ReadFile(filepath.Join(dir, "fn444_fan_normal_ch0_16000Hz.wav"))
	if err != nil {
		t.Fatal(err)
	}
	// levels[k] is the RMS of channel k+1, levels[8] that of the mean.
	var levels [9]float64
	for _, mode := range []string{"mean", "5", "each"} {
		p := realPlant(t, fmt.Sprintf(plantTOML, mode), files)
		inv, err := Scan(context.Background(), p, ScanOptions{Levels: true})
		if err != nil {
			t.Fatal(err)
		}
		want := map[string]int{"mean": 1, "5": 1, "each": 8}[mode]
		if len(inv.Recordings) != want {
			t.Fatalf("%s: %d streams, want %d", mode, len(inv.Recordings), want)
		}
		for _, r := range inv.Recordings {
			if r.Format.Channels != 8 || r.Frames != 160000 || r.Seconds != 10 || len(r.Clips) != 1 || r.Group != "fan-1/normal/fn444.wav" || !r.Usable() {
				t.Fatalf("%s: %+v", mode, r)
			}
			clips := clipsOf(t, r)
			x := clips[0]
			var sq float64
			for _, v := range x {
				sq += v * v
			}
			k := 8
			if r.Channel > 0 {
				k = r.Channel - 1
			}
			levels[k] = math.Sqrt(sq / float64(len(x)))
			if r.Channel == 1 {
				for i, v := range x {
					if v != mono.Data[i] {
						t.Fatalf("%s: channel 1 sample %d is %v, the mono extraction %v", mode, i, v, mono.Data[i])
					}
				}
			}
		}
	}
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import numpy").Run(); err != nil {
		t.Logf("numpy cross-check skipped: %s with numpy not available (%v)", py, err)
		return
	}
	// numpy reads the data chunk itself (the file is WAVE_FORMAT_EXTENSIBLE,
	// which Python's wave module refuses).
	script := `import sys, json, struct, numpy as np
b = open(sys.argv[1], 'rb').read()
i, ch, rate, data = 12, 0, 0, None
while i + 8 <= len(b):
    cid, size = b[i:i+4], struct.unpack('<I', b[i+4:i+8])[0]
    if cid == b'fmt ':
        ch, rate = struct.unpack('<HI', b[i+10:i+16])
    if cid == b'data':
        data = b[i+8:i+8+size]
        break
    i += 8 + size + (size & 1)
x = np.frombuffer(data, dtype='<i2').reshape(-1, ch) / 32768.0
rms = [float(np.sqrt(np.mean(x[:, k] ** 2))) for k in range(ch)]
rms.append(float(np.sqrt(np.mean(x.mean(axis=1) ** 2))))
print(json.dumps({"frames": x.shape[0], "seconds": x.shape[0] / rate, "rms": rms}))`
	out, err := exec.Command(py, "-c", script, filepath.Join(dir, "fn444.wav")).Output()
	if err != nil {
		t.Fatalf("numpy: %v", err)
	}
	var ref struct {
		Frames  int
		Seconds float64
		RMS     []float64
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	if ref.Frames != 160000 || ref.Seconds != 10 || len(ref.RMS) != 9 {
		t.Fatalf("numpy: %+v", ref)
	}
	for k, want := range ref.RMS {
		if levels[k] == 0 {
			continue // a channel no mode above read
		}
		if math.Abs(levels[k]-want) > 1e-9*want {
			t.Errorf("stream %d: RMS %.12g, numpy %.12g", k, levels[k], want)
		}
	}
}

// The bearing rig's 48 kHz normal record in a 12 kHz plant with the 12 kHz
// fault records: resampled by 1/4, its strongest low-frequency lines (mains
// harmonics at 240.01 and 359.99 Hz, per its README) stay at their
// frequencies within 0.01 %; the float records beyond ±1 are noted as not
// full-scale audio, not as clipped.
func TestRealBearingResampled(t *testing.T) {
	dir := realdata.Dir(t, "cwru-bearing")
	p := realPlant(t, BearingPlantTOML(5), map[string]string{
		"motor-de/normal/Normal_0_X097_DE_48000Hz.wav":      filepath.Join(dir, "Normal_0_X097_DE_48000Hz.wav"),
		"motor-de/inner-race/IR007_0_X105_DE_12000Hz.wav":   filepath.Join(dir, "IR007_0_X105_DE_12000Hz.wav"),
		"motor-de/outer-race/OR007@6_0_X130_DE_12000Hz.wav": filepath.Join(dir, "OR007@6_0_X130_DE_12000Hz.wav"),
	})
	inv, err := Scan(context.Background(), p, ScanOptions{Levels: true})
	if err != nil {
		t.Fatal(err)
	}
	by := byRel(inv)
	n := by["motor-de/normal/Normal_0_X097_DE_48000Hz.wav"]
	if n == nil || !n.Usable() || n.Resample != "1/4" || n.BandwidthHz != 5400 || len(n.Clips) != 1 {
		t.Fatalf("normal record: %+v", n)
	}
	or := by["motor-de/outer-race/OR007@6_0_X130_DE_12000Hz.wav"]
	if or == nil || !or.BeyondFullScale || or.Levels.Clipped != 0 {
		t.Fatalf("outer-race record: %+v", or)
	}
	noted := false
	for _, pr := range inv.Problems {
		if pr.Path == or.Rel && pr.Kind == "not-full-scale" && strings.Contains(pr.Msg, "not full-scale audio, peak 3.6") {
			noted = true
		}
	}
	if !noted {
		t.Errorf("no not-full-scale note for the outer-race record: %v", inv.Problems)
	}
	y := clipsOf(t, n)[0] // 5 s at 12 kHz
	a, err := wavio.ReadFile(n.Path)
	if err != nil {
		t.Fatal(err)
	}
	x := a.Data[:4*len(y)] // the same 5 s at 48 kHz
	for _, f := range []float64{240.01, 359.99} {
		f48 := linePeak(x, 48000, f-2, f+2)
		f12 := linePeak(y, 12000, f-2, f+2)
		t.Logf("line %.2f Hz: %.4f Hz at 48 kHz, %.4f Hz resampled", f, f48, f12)
		if math.Abs(f48-f) > 0.05 {
			t.Errorf("line %.2f Hz found at %.4f Hz in the 48 kHz record", f, f48)
		}
		if math.Abs(f12-f48) > 1e-4*f48 {
			t.Errorf("line %.2f Hz: %.4f Hz after resampling, %.4f Hz before (want within 0.01 %%)", f, f12, f48)
		}
	}
}

// BearingPlantTOML is a 12 kHz plant of the bearing rig (drive-end bearing
// SKF 6205: 9 balls, d = 0.3126 in, D = 1.537 in, per the data's README)
// with clips of clipSeconds.
func BearingPlantTOML(clipSeconds float64) string {
	return fmt.Sprintf(`seed = 3
sample_rate = 12000
recordings = "recordings"
clip_seconds = %g

[[machine]]
id = "motor-de"
kind = "motor"
  [[machine.bearing]]
  balls = 9
  ball_diameter_mm = 7.94
  pitch_diameter_mm = 39.04
  contact_angle_deg = 0
  [[machine.condition]]
  name = "normal"
  rpm = 1797
  band_percent = 1
  [[machine.condition]]
  name = "inner-race"
  rpm = 1797
  band_percent = 1
  [[machine.condition]]
  name = "outer-race"
  rpm = 1796
  band_percent = 1
`, clipSeconds)
}

// linePeak returns the frequency of the largest spectral line of x in
// [lo, hi] Hz: Hann window, zero padding to 4× the length, quadratic
// interpolation of the log magnitude (common practice).
func linePeak(x []float64, fs, lo, hi float64) float64 {
	n := dsp.NextPow2(4 * len(x))
	buf := make([]float64, n)
	for i, v := range x {
		buf[i] = v * (0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(len(x))))
	}
	spec := dsp.NewRealFFT(n).Forward(nil, buf)
	df := fs / float64(n)
	best := -1
	for k := int(lo / df); k <= int(hi/df)+1; k++ {
		if best < 0 || cmplx.Abs(spec[k]) > cmplx.Abs(spec[best]) {
			best = k
		}
	}
	a, b, c := math.Log(cmplx.Abs(spec[best-1])), math.Log(cmplx.Abs(spec[best])), math.Log(cmplx.Abs(spec[best+1]))
	return (float64(best) + 0.5*(a-c)/(a-2*b+c)) * df
}

// Survey (scan with levels) of the four eight-channel array files.
func BenchmarkSurveyArrayFiles(b *testing.B) {
	dir := realdata.Dir(b, "mimii-machine-sound")
	files := map[string]string{}
	for _, f := range []string{"fn444", "fab969", "pn113", "pab403"} {
		files["fan-1/normal/"+f+".wav"] = filepath.Join(dir, f+".wav")
	}
	p := realPlant(b, `seed = 1
sample_rate = 16000
recordings = "recordings"

[[machine]]
id = "fan-1"
kind = "fan"
  [[machine.condition]]
  name = "normal"
  rpm = 1500
  band_percent = 2
`, files)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		inv, err := Scan(context.Background(), p, ScanOptions{Levels: true})
		if err != nil || len(inv.Recordings) != 4 {
			b.Fatal(err)
		}
		Summarise(inv)
	}
}
