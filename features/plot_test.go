package features

import (
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

func checkPNG(t *testing.T, path string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	b := img.Bounds()
	if b.Dx() < 100 || b.Dy() < 100 {
		t.Fatalf("%s: %v", path, b)
	}
	first := img.At(b.Min.X, b.Min.Y)
	for y := b.Min.Y; y < b.Max.Y; y += 7 {
		for x := b.Min.X; x < b.Max.X; x += 7 {
			if img.At(x, y) != first {
				return
			}
		}
	}
	t.Fatalf("%s: blank picture", path)
}

func TestSpectrogramPNG(t *testing.T) {
	const fs = 16000
	l, err := NewLogMel(Config{}, fs)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	x := tone(2*fs, fs, 1500, 0.3)
	y := make([]float64, len(x))
	for i := range x {
		y[i] = x[i] + 0.05*rng.NormFloat64()
	}
	a, fa := l.Compute(nil, x)
	b, fb := l.Compute(nil, y)
	s, _ := NewSTFT(Config{})
	spec, fs2 := s.Compute(nil, x)
	lin := make([]float32, len(spec))
	for i, v := range spec {
		lin[i] = float32(10 * math.Log10(v+1e-12))
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "spec.png")
	panels := []Panel{
		l.Panel("recorded", a, fa),
		l.Panel("augmented", b, fb),
		{Title: "STFT", Data: lin, Frames: fs2, Rows: s.Bins(), FrameSeconds: 512.0 / fs, FMax: fs / 2},
	}
	if err := SpectrogramPNG(path, panels); err != nil {
		t.Fatal(err)
	}
	checkPNG(t, path)
	bad := []Panel{{Title: "short", Data: a[:10], Frames: fa, Rows: 128, FrameSeconds: 0.032, FMax: 8000}}
	if err := SpectrogramPNG(filepath.Join(dir, "bad.png"), bad); err == nil {
		t.Error("bad panel accepted")
	}
	if err := SpectrogramPNG(filepath.Join(dir, "none.png"), nil); err == nil {
		t.Error("no panels accepted")
	}
}

func TestEnvelopePNG(t *testing.T) {
	spec := make([]float64, 2048)
	const binHz = 0.5
	for k := range spec {
		f := float64(k) * binHz
		spec[k] = 0.01 + math.Exp(-math.Pow(f-107.4, 2)) + 0.5*math.Exp(-math.Pow(f-214.8, 2))
	}
	path := filepath.Join(t.TempDir(), "env.png")
	lines := map[string]float64{"bpfo": 107.36, "bpfi": 162.19, "ftf": 11.93}
	if err := EnvelopePNG(path, "test", spec, binHz, lines); err != nil {
		t.Fatal(err)
	}
	checkPNG(t, path)
	if err := EnvelopePNG(path, "test", spec, binHz, map[string]float64{"x": -1}); err == nil {
		t.Error("negative line accepted")
	}
}
