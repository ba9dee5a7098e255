package wavio

import (
	"io"
	"os"
	"path/filepath"
	"testing"
)

// FLAC decodes bit-exactly to what SoX decodes from the same file (the
// fixtures and the SoX commands that made them are in testdata/flac).
func TestFLACMatchesReferenceDecode(t *testing.T) {
	for _, c := range []struct {
		name           string
		rate, ch, bits int
	}{
		{"s16-mono", 16000, 1, 16},
		{"s24-stereo", 48000, 2, 24},
		{"s16-6ch", 44100, 6, 16},
		{"s24-mono-noise", 16000, 1, 24},
	} {
		t.Run(c.name, func(t *testing.T) {
			base := filepath.Join("testdata", "flac", c.name)
			got, err := ReadFile(base + ".flac")
			if err != nil {
				t.Fatal(err)
			}
			want, err := ReadFile(base + ".ref.wav")
			if err != nil {
				t.Fatal(err)
			}
			f := got.Format
			if f.Codec != CodecFLAC || f.SampleRate != c.rate || f.Channels != c.ch || f.BitDepth != c.bits || f.ValidBits != c.bits || f.Float {
				t.Fatalf("format %+v, want %d Hz, %d channels, %d bits, codec flac", f, c.rate, c.ch, c.bits)
			}
			if got.Frames != want.Frames || len(got.Data) != len(want.Data) {
				t.Fatalf("%d frames, reference %d", got.Frames, want.Frames)
			}
			var nonzero int
			for i := range want.Data {
				if got.Data[i] != want.Data[i] {
					t.Fatalf("sample %d: %v, reference %v", i, got.Data[i], want.Data[i])
				}
				if want.Data[i] != 0 {
					nonzero++
				}
			}
			if nonzero < len(want.Data)/2 {
				t.Fatalf("only %d of %d reference samples are nonzero", nonzero, len(want.Data))
			}
			if len(got.Warnings) != 0 {
				t.Errorf("warnings %v", got.Warnings)
			}
		})
	}
}

// FLAC streams through the same block reader as WAV: small reads and Skip
// give the same samples as one whole read.
func TestFLACStreamAndSkip(t *testing.T) {
	path := filepath.Join("testdata", "flac", "s24-stereo.flac")
	all, err := ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	f, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if f.Frames() != int64(all.Frames) || f.DataOffset() != -1 {
		t.Fatalf("Frames %d (want %d), DataOffset %d (want −1)", f.Frames(), all.Frames, f.DataOffset())
	}
	const skip = 1001
	if err := f.Skip(skip); err != nil {
		t.Fatal(err)
	}
	buf := make([]float64, 2*77)
	pos := skip
	for {
		n, err := f.ReadFrames(buf)
		for i := 0; i < 2*n; i++ {
			if buf[i] != all.Data[2*pos+i] {
				t.Fatalf("frame %d: streamed %v, whole %v", pos+i/2, buf[i], all.Data[2*pos+i])
			}
		}
		pos += n
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	if pos != all.Frames {
		t.Fatalf("streamed to frame %d of %d", pos, all.Frames)
	}
}

// A FLAC stream cut short is read up to the cut with a warning or fails
// with an error naming the file: never a panic.
func TestFLACTruncated(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("testdata", "flac", "s16-mono.flac"))
	if err != nil {
		t.Fatal(err)
	}
	for _, cut := range []int{5, 40, len(b) / 2, len(b) - 3} {
		p := filepath.Join(t.TempDir(), "cut.flac")
		if err := os.WriteFile(p, b[:cut], 0o644); err != nil {
			t.Fatal(err)
		}
		a, err := ReadFile(p)
		if err == nil && a.Frames >= 4000 {
			t.Errorf("cut at %d: %d frames, no error", cut, a.Frames)
		}
		if err != nil && !contains(err.Error(), p) {
			t.Errorf("cut at %d: error %q does not name the file", cut, err)
		}
	}
}

func contains(s, sub string) bool {
	for i := 0; i+len(sub) <= len(s); i++ {
		if s[i:i+len(sub)] == sub {
			return true
		}
	}
	return false
}
