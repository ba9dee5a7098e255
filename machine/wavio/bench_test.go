package wavio

import (
	"bytes"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"github.com/go-audio/wav"
)

// benchSignal is 60 s of 48 kHz stereo: two tones plus PCG noise.
func benchSignal() []float64 {
	const rate, frames = 48000, 60 * 48000
	rng := rand.New(rand.NewPCG(7, 11))
	x := make([]float64, 2*frames)
	for i := range frames {
		t := float64(i) / rate
		x[2*i] = 0.4*math.Sin(2*math.Pi*120*t) + 0.05*rng.NormFloat64()
		x[2*i+1] = 0.3*math.Sin(2*math.Pi*1480*t) + 0.05*rng.NormFloat64()
	}
	return x
}

// BenchmarkReadWAV reads 60 s of 48 kHz 16-bit stereo (11.5 MB) from a file
// with this reader and with go-audio/wav's FullPCMBuffer on an *os.File,
// then logs the speed-up, which must be at least 10×.
func BenchmarkReadWAV(b *testing.B) {
	path := filepath.Join(b.TempDir(), "bench.wav")
	if err := WriteFile(path, benchSignal(), 48000, 2, PCM16); err != nil {
		b.Fatal(err)
	}
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	var ours, theirs float64 // ns/op
	b.Run("thrum/ReadFile", func(b *testing.B) {
		b.SetBytes(st.Size())
		for b.Loop() {
			a, err := ReadFile(path)
			if err != nil || a.Frames != 60*48000 {
				b.Fatal(err)
			}
		}
		ours = float64(b.Elapsed().Nanoseconds()) / float64(b.N)
	})
	b.Run("thrum/stream4096", func(b *testing.B) {
		b.SetBytes(st.Size())
		dst := make([]float64, 2*4096)
		for b.Loop() {
			f, err := Open(path)
			if err != nil {
				b.Fatal(err)
			}
			total := 0
			for {
				n, err := f.ReadFrames(dst)
				total += n
				if err == io.EOF {
					break
				}
				if err != nil {
					b.Fatal(err)
				}
			}
			f.Close()
			if total != 60*48000 {
				b.Fatalf("%d frames", total)
			}
		}
	})
	b.Run("thrum/stream4096_f32", func(b *testing.B) {
		b.SetBytes(st.Size())
		dst := make([]float32, 2*4096)
		for b.Loop() {
			f, err := Open(path)
			if err != nil {
				b.Fatal(err)
			}
			for {
				if _, err := f.ReadFrames32(dst); err != nil {
					break
				}
			}
			f.Close()
		}
	})
	b.Run("goaudio/FullPCMBuffer", func(b *testing.B) {
		b.SetBytes(st.Size())
		for b.Loop() {
			f, err := os.Open(path)
			if err != nil {
				b.Fatal(err)
			}
			buf, err := wav.NewDecoder(f).FullPCMBuffer()
			f.Close()
			if err != nil || len(buf.Data) != 2*60*48000 {
				b.Fatal(err)
			}
		}
		theirs = float64(b.Elapsed().Nanoseconds()) / float64(b.N)
	})
	if ours > 0 && theirs > 0 {
		b.Logf("ReadFile %.1f ms, go-audio FullPCMBuffer %.1f ms: %.0f× faster", ours/1e6, theirs/1e6, theirs/ours)
		if theirs/ours < 10 {
			b.Errorf("only %.1f× faster than go-audio FullPCMBuffer, want ≥ 10×", theirs/ours)
		}
	}
}

// BenchmarkWriteWAV encodes 60 s of 48 kHz stereo in each encoding, and
// writes it atomically to a file.
func BenchmarkWriteWAV(b *testing.B) {
	x := benchSignal()
	for _, enc := range []Encoding{PCM16, PCM24, Float32} {
		b.Run("Encode/"+enc.String(), func(b *testing.B) {
			b.SetBytes(int64(len(x) * enc.bytes()))
			for b.Loop() {
				if err := Encode(io.Discard, x, 48000, 2, enc); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
	dir := b.TempDir()
	b.Run("WriteFile/pcm16", func(b *testing.B) {
		b.SetBytes(int64(len(x) * 2))
		for b.Loop() {
			if err := WriteFile(filepath.Join(dir, "w.wav"), x, 48000, 2, PCM16); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// FLAC decoding against WAV decoding of the same samples (SoX's decode of
// the fixture): throughput per decoded sample byte of the 24-bit stereo
// fixture.
func BenchmarkFLACDecode(b *testing.B) {
	for _, name := range []string{"s24-stereo.flac", "s24-stereo.ref.wav"} {
		b.Run(name, func(b *testing.B) {
			path := filepath.Join("testdata", "flac", name)
			data, err := os.ReadFile(path)
			if err != nil {
				b.Fatal(err)
			}
			buf := make([]float64, 4096)
			b.SetBytes(12000 * 2 * 3)
			for i := 0; i < b.N; i++ {
				r, err := NewReader(bytes.NewReader(data), name, int64(len(data)))
				if err != nil {
					b.Fatal(err)
				}
				for {
					if _, err := r.ReadFrames(buf); err != nil {
						break
					}
				}
			}
		})
	}
}
