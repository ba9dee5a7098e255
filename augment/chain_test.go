package augment

import (
	"bytes"
	"context"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"thrum/augment/room"
	"thrum/machine/wavio"
)

// ChainFolder fuses and reorders buffers, but it must write exactly what
// the transforms give when applied one after another and encoded by
// wavio.Encode: same bytes, for in-place and looped backgrounds, with and
// without gain, and for a stereo input (mixed down to mono).
func TestChainFolderMatchesTransforms(t *testing.T) {
	const fs = 16000
	rng := rand.New(rand.NewPCG(3, 4))
	noise := func(n int, amp float64) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = amp * rng.NormFloat64()
		}
		return x
	}
	dir := t.TempDir()
	in := filepath.Join(dir, "in")
	if err := os.MkdirAll(in, 0o755); err != nil {
		t.Fatal(err)
	}
	clips := [][]float64{noise(9000, 0.1), noise(12000, 0.05), noise(7000, 0.2)}
	for i, c := range clips {
		ch := 1
		if i == 2 {
			ch = 2 // interleaved stereo: 3500 frames
		}
		if err := wavio.WriteFile(filepath.Join(in, "c"+string(rune('0'+i))+".wav"), c, fs, ch, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
	}
	ir := noise(700, 0.3)
	bg := noise(20000, 0.1) // offsets 0, 0.5 and 1 s; the 1 s one loops
	irPath, bgPath := filepath.Join(dir, "ir.wav"), filepath.Join(dir, "bg.wav")
	if err := wavio.WriteFile(irPath, ir, fs, 1, wavio.Float32); err != nil {
		t.Fatal(err)
	}
	if err := wavio.WriteFile(bgPath, bg, fs, 1, wavio.Float32); err != nil {
		t.Fatal(err)
	}
	for _, gain := range []float64{0, -3} {
		out := filepath.Join(dir, "out", "g"+string(rune('0'-int(gain))))
		o := ChainOptions{In: in, Out: out, Speed: 1.03, IR: irPath, Background: bgPath, SNR: 10,
			OffsetStep: 0.5, OffsetCycle: 3, GainDB: gain, Workers: 2}
		files, _, err := ChainFolder(context.Background(), o)
		if err != nil || files != 3 {
			t.Fatalf("gain %v: %d files, %v", gain, files, err)
		}
		irA, _ := wavio.ReadFile(irPath)
		bgA, _ := wavio.ReadFile(bgPath)
		rv := room.NewReverb(room.UnitEnergy(irA.Mono(nil)), fs)
		for i := range clips {
			name := "c" + string(rune('0'+i)) + ".wav"
			a, err := wavio.ReadFile(filepath.Join(in, name))
			if err != nil {
				t.Fatal(err)
			}
			x := Speed{Ratio: 1.03}.Apply(nil, a.Mono(nil), fs)
			x = rv.Apply(nil, x, fs)
			x = Background{Source: bgA.Mono(nil), SNR: 10, Offset: int(float64(i) * 0.5 * fs)}.Apply(nil, x, fs)
			if gain != 0 {
				x = Gain{DB: gain}.Apply(x, x, fs)
			}
			var want bytes.Buffer
			if err := wavio.Encode(&want, x, fs, 1, wavio.PCM16); err != nil {
				t.Fatal(err)
			}
			got, err := os.ReadFile(filepath.Join(out, name))
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got, want.Bytes()) {
				t.Errorf("gain %v, %s: chain output differs from the transforms applied in turn", gain, name)
			}
		}
	}
}
