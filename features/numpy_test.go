package features

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
)

// python is Debian's system interpreter, where python3-numpy installs; a
// python3 found first on PATH may lack numpy.
const python = "/usr/bin/python3"

// needNumpy skips the test unless numpy, the general-purpose reference these
// cross-checks use, can be imported.
func needNumpy(t *testing.T) {
	t.Helper()
	if err := exec.Command(python, "-c", "import numpy").Run(); err != nil {
		t.Skipf("numpy reference unavailable (%s -c 'import numpy': %v)", python, err)
	}
}

func runPython(t *testing.T, script string, args ...string) string {
	t.Helper()
	cmd := exec.Command(python, append([]string{"-c", script}, args...)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("python: %v\n%s%s", err, out.String(), errb.String())
	}
	return out.String()
}

const npyCheckScript = `
import sys, numpy as np
for path, shape in zip(sys.argv[1::2], sys.argv[2::2]):
    shape = tuple(int(s) for s in shape.split(',') if s)
    with open(path, 'rb') as f:
        major, minor = np.lib.format.read_magic(f)
        assert (major, minor) == (1, 0), (path, major, minor)
        np.lib.format.read_array_header_1_0(f)
        assert f.tell() % 64 == 0, (path, f.tell())
    a = np.load(path)
    assert a.dtype == np.dtype('<f4'), (path, a.dtype)
    assert a.shape == shape, (path, a.shape, shape)
    want = (np.arange(int(np.prod(shape)), dtype=np.float64) * 0.25 - 3.0).astype(np.float32).reshape(shape)
    assert np.array_equal(a, want), (path, a, want)
print('ok')
`

func ramp(n int) []float32 {
	d := make([]float32, n)
	for i := range d {
		d[i] = float32(float64(i)*0.25 - 3)
	}
	return d
}

func TestNPYLoadsInNumpy(t *testing.T) {
	needNumpy(t)
	dir := t.TempDir()
	var args []string
	shapes := [][]int{{3, 4}, {7}, {0, 128}, {2, 3, 5}, {1, 1}, {31, 128}}
	for i, sh := range shapes {
		n := 1
		for _, d := range sh {
			n *= d
		}
		path := filepath.Join(dir, fmt.Sprintf("a%d.npy", i))
		if err := WriteNPYFile(path, ramp(n), sh...); err != nil {
			t.Fatal(err)
		}
		arg := ""
		for j, d := range sh {
			if j > 0 {
				arg += ","
			}
			arg += fmt.Sprint(d)
		}
		args = append(args, path, arg)
	}
	// A stacked file of unknown length: three clips of 5, 0 and 9 rows.
	path := filepath.Join(dir, "stack.npy")
	sf, err := CreateStackFile(path, 4)
	if err != nil {
		t.Fatal(err)
	}
	all := ramp(14 * 4)
	for _, part := range [][2]int{{0, 20}, {20, 20}, {20, 56}} {
		if err := sf.Write(all[part[0]:part[1]]); err != nil {
			t.Fatal(err)
		}
	}
	if err := sf.Close(); err != nil {
		t.Fatal(err)
	}
	args = append(args, path, "14,4")
	if out := runPython(t, npyCheckScript, args...); out != "ok\n" {
		t.Errorf("numpy says %q", out)
	}
}

// numpyLogMel is the reference recipe: n_fft 1024, hop 512, periodic Hann,
// no padding, 128 HTK bands 0..8 kHz, unit-peak triangles on edges equally
// spaced in HTK mel, log10(power @ fb.T + 1e-10).
const numpyLogMelScript = `
import sys, numpy as np
sr, n_fft, hop, n_mels = 16000, 1024, 512, 128
win = 0.5 - 0.5 * np.cos(2 * np.pi * np.arange(n_fft) / n_fft)
hz2mel = lambda f: 2595.0 * np.log10(1.0 + f / 700.0)
mel2hz = lambda m: 700.0 * (10.0 ** (m / 2595.0) - 1.0)
edges = mel2hz(np.linspace(hz2mel(0.0), hz2mel(sr / 2), n_mels + 2))
freqs = np.arange(n_fft // 2 + 1) * sr / n_fft
fb = np.zeros((n_mels, n_fft // 2 + 1))
for b in range(n_mels):
    lo, mid, hi = edges[b:b + 3]
    fb[b] = np.maximum(0, np.minimum((freqs - lo) / (mid - lo), (hi - freqs) / (hi - mid)))
for src, dst in zip(sys.argv[1::2], sys.argv[2::2]):
    x = np.fromfile(src, dtype='<f8')
    n_frames = 1 + (len(x) - n_fft) // hop
    frames = np.stack([x[i * hop:i * hop + n_fft] * win for i in range(n_frames)])
    power = np.abs(np.fft.rfft(frames, axis=1)) ** 2
    out = np.log10(power @ fb.T + 1e-10)
    out.astype('<f8').tofile(dst)
`

func TestLogMelMatchesNumpy(t *testing.T) {
	needNumpy(t)
	const fs = 16000
	rng := rand.New(rand.NewPCG(11, 12))
	type clip struct {
		name string
		x    []float64
	}
	var clips []clip
	mix := make([]float64, 3*fs)
	for i := range mix {
		tt := float64(i) / fs
		mix[i] = 0.3*math.Sin(2*math.Pi*997*tt) + 0.1*math.Sin(2*math.Pi*123.4*tt) + 0.05*rng.NormFloat64()
	}
	clips = append(clips, clip{"tones+noise", mix})
	chirp := make([]float64, 2*fs+333)
	for i := range chirp {
		tt := float64(i) / fs
		chirp[i] = 0.9 * math.Sin(2*math.Pi*(50*tt+1900*tt*tt))
	}
	clips = append(clips, clip{"chirp", chirp})
	quiet := make([]float64, fs)
	for i := range quiet {
		quiet[i] = 1e-6 * rng.NormFloat64()
	}
	clips = append(clips, clip{"quiet", quiet}) // power near the 1e-10 epsilon
	clicks := make([]float64, fs+1000)
	for i := 0; i < len(clicks); i += 1601 {
		clicks[i] = 1
	}
	clips = append(clips, clip{"clicks", clicks})

	l, err := NewLogMel(Config{Log: LogNumpy}, fs)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	var args []string
	for i, c := range clips {
		in := filepath.Join(dir, fmt.Sprintf("in%d.f64", i))
		b := make([]byte, 0, 8*len(c.x))
		for _, v := range c.x {
			b = binary.LittleEndian.AppendUint64(b, math.Float64bits(v))
		}
		if err := os.WriteFile(in, b, 0o644); err != nil {
			t.Fatal(err)
		}
		args = append(args, in, filepath.Join(dir, fmt.Sprintf("out%d.f64", i)))
	}
	runPython(t, numpyLogMelScript, args...)
	for i, c := range clips {
		raw, err := os.ReadFile(args[2*i+1])
		if err != nil {
			t.Fatal(err)
		}
		got, frames := l.Compute(nil, c.x)
		if len(raw) != 8*frames*128 {
			t.Fatalf("%s: ours %d×128 values, numpy %d", c.name, frames, len(raw)/8)
		}
		worst := 0.0
		for j := range got {
			want := math.Float64frombits(binary.LittleEndian.Uint64(raw[8*j:]))
			worst = math.Max(worst, math.Abs(float64(got[j])-want))
		}
		// Tolerance 1e-4 in log10 units, that is 1e-3 dB.
		if worst > 1e-4 {
			t.Errorf("%s: worst difference from numpy %.3g log10 units", c.name, worst)
		}
		t.Logf("%s: %d frames, worst |ours − numpy| = %.2g log10 units", c.name, frames, worst)
	}
}
