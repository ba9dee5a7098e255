package wavio

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// Round trip write → read for every encoding, channel count and odd sizes.
// Samples already on the encoding's grid come back exactly; arbitrary ones
// come back within half a step (PCM) or as their float32 rounding.
func TestRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, enc := range []Encoding{PCM16, PCM24, Float32} {
		for _, ch := range []int{1, 2, 3, 6} {
			for _, frames := range []int{0, 1, 2, 101, 1001, 40000} {
				x := make([]float64, frames*ch)
				for i := range x {
					x[i] = 2*rng.Float64() - 1
				}
				var buf bytes.Buffer
				if err := Encode(&buf, x, 44100, ch, enc); err != nil {
					t.Fatal(err)
				}
				if buf.Len()%2 != 0 {
					t.Errorf("%v %dch %d frames: odd file length %d (pad byte missing)", enc, ch, frames, buf.Len())
				}
				r, err := NewReader(bytes.NewReader(buf.Bytes()), "rt.wav", int64(buf.Len()))
				if err != nil {
					t.Fatal(err)
				}
				if len(r.Warnings()) != 0 {
					t.Errorf("%v: warnings %q", enc, r.Warnings())
				}
				f := r.Format()
				if f.SampleRate != 44100 || f.Channels != ch || f.BitDepth != 8*enc.bytes() || f.Float != (enc == Float32) {
					t.Errorf("%v: format %+v", enc, f)
				}
				got := readAllBlocks(t, r, 999)
				if len(got) != len(x) {
					t.Fatalf("%v %dch %d frames: read %d samples", enc, ch, frames, len(got))
				}
				step := 0.0
				switch enc {
				case PCM16:
					step = 1.0 / 32768
				case PCM24:
					step = 1.0 / 8388608
				}
				for i, v := range x {
					var ok bool
					if enc == Float32 {
						ok = got[i] == float64(float32(v))
					} else {
						ok = math.Abs(got[i]-v) <= step/2 || v > 1-step && got[i] == 1-step
					}
					if !ok {
						t.Fatalf("%v %dch: sample %d: wrote %v read %v", enc, ch, i, v, got[i])
					}
				}
				// Decoded values are on the grid, so a second pass is exact.
				var again bytes.Buffer
				if err := Encode(&again, got, 44100, ch, enc); err != nil {
					t.Fatal(err)
				}
				if !bytes.Equal(again.Bytes(), buf.Bytes()) {
					t.Errorf("%v %dch %d frames: re-encoding decoded samples changed the file", enc, ch, frames)
				}
			}
		}
	}
}

// Rounding to nearest (ties to even) and clamping to the integer
// range, as documented on Encode.
func TestEncodeQuantize(t *testing.T) {
	for _, tc := range []struct {
		in   float64
		want int16
	}{
		{0, 0}, {1, 32767}, {-1, -32768}, {2, 32767}, {-7, -32768},
		{math.Inf(1), 32767}, {math.Inf(-1), -32768}, {math.NaN(), 0},
		{0.5 / 32768, 0}, {-0.5 / 32768, 0}, {0.51 / 32768, 1}, {-0.51 / 32768, -1},
		{0.49999999999999994 / 32768, 0}, {1.5 / 32768, 2}, {2.5 / 32768, 2}, {-2.5 / 32768, -2},
		{32765.5 / 32768, 32766}, {32766.5 / 32768, 32766}, {32766.51 / 32768, 32767},
		{-32767.5 / 32768, -32768}, {-32766.5 / 32768, -32766}, {1e-300, 0},
	} {
		var buf bytes.Buffer
		if err := Encode(&buf, []float64{tc.in}, 8000, 1, PCM16); err != nil {
			t.Fatal(err)
		}
		if got := int16(le.Uint16(buf.Bytes()[44:])); got != tc.want {
			t.Errorf("%v → %d, want %d", tc.in, got, tc.want)
		}
	}
	var buf bytes.Buffer
	if err := Encode(&buf, []float64{1, -1, 1e9}, 8000, 1, PCM24); err != nil {
		t.Fatal(err)
	}
	if got := buf.Bytes()[44:53]; !bytes.Equal(got, []byte{0xFF, 0xFF, 0x7F, 0, 0, 0x80, 0xFF, 0xFF, 0x7F}) {
		t.Errorf("PCM24 extremes % x", got)
	}
}

// quantize agrees with math.RoundToEven plus clamping on random values in
// and beyond the full-scale range.
func TestQuantizeMatchesRoundToEven(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, bits := range []int{16, 24} {
		scale := math.Ldexp(1, bits-1)
		lo, hi := -scale, scale-1
		for range 200000 {
			v := 2.2*rng.Float64() - 1.1
			if rng.IntN(4) == 0 { // exact ties
				v = (math.Floor(v*scale) + 0.5) / scale
			}
			want := min(max(math.RoundToEven(v*scale), lo), hi)
			if got := quantize(v, scale, int32(lo), int32(hi)); float64(got) != want {
				t.Fatalf("%d-bit: quantize(%v) = %d, want %v", bits, v, got, want)
			}
		}
	}
}

// The float header: tag 3, an 18-byte fmt with cbSize 0, and a fact chunk
// holding the frame count (Microsoft RIFF multimedia specification, 1991,
// fact chunk required for non-PCM formats; from memory).
func TestFloat32Header(t *testing.T) {
	var buf bytes.Buffer
	if err := Encode(&buf, []float64{0.5, -0.25, 1, 0, 2, 3}, 48000, 2, Float32); err != nil {
		t.Fatal(err)
	}
	b := buf.Bytes()
	check := func(what string, got, want any) {
		if got != want {
			t.Errorf("%s = %v, want %v", what, got, want)
		}
	}
	check("riff", string(b[0:4])+string(b[8:16]), "RIFFWAVEfmt ")
	check("riff size", le.Uint32(b[4:]), uint32(len(b)-8))
	check("fmt size", le.Uint32(b[16:]), uint32(18))
	check("tag", le.Uint16(b[20:]), uint16(3))
	check("byte rate", le.Uint32(b[28:]), uint32(48000*8))
	check("block align", le.Uint16(b[32:]), uint16(8))
	check("bits", le.Uint16(b[34:]), uint16(32))
	check("cbSize", le.Uint16(b[36:]), uint16(0))
	check("fact", string(b[38:42]), "fact")
	check("fact size", le.Uint32(b[42:]), uint32(4))
	check("fact frames", le.Uint32(b[46:]), uint32(3))
	check("data", string(b[50:54]), "data")
	check("data size", le.Uint32(b[54:]), uint32(24))
	check("length", len(b), 58+24)
	// Float samples are not clamped.
	check("sample 4", math.Float32frombits(le.Uint32(b[58+16:])), float32(2))
}

// PCM headers and the pad byte of odd data: 24-bit mono with 3 frames has
// 9 data bytes, so the file ends with one zero byte that the RIFF size counts.
func TestPCMHeaderAndPad(t *testing.T) {
	var buf bytes.Buffer
	if err := Encode(&buf, []float64{0, 0.5, -0.5}, 16000, 1, PCM24); err != nil {
		t.Fatal(err)
	}
	b := buf.Bytes()
	if len(b) != 44+9+1 || b[len(b)-1] != 0 || le.Uint32(b[40:]) != 9 || le.Uint32(b[4:]) != uint32(len(b)-8) ||
		le.Uint32(b[16:]) != 16 || le.Uint16(b[20:]) != 1 || le.Uint16(b[34:]) != 24 {
		t.Errorf("header % x", b[:44])
	}
}

func TestEncodeArgErrors(t *testing.T) {
	for _, tc := range []struct {
		name     string
		n        int
		rate, ch int
		enc      Encoding
	}{
		{"bad encoding", 2, 8000, 1, 0},
		{"no channels", 2, 8000, 0, PCM16},
		{"too many channels", 2, 8000, 70000, PCM16},
		{"zero rate", 2, 0, 1, PCM16},
		{"partial frame", 3, 8000, 2, PCM16},
	} {
		var buf bytes.Buffer
		err := Encode(&buf, make([]float64, tc.n), tc.rate, tc.ch, tc.enc)
		if err == nil || buf.Len() != 0 || err.Error()[:7] != "wavio: " {
			t.Errorf("%s: err %v, %d bytes written", tc.name, err, buf.Len())
		}
	}
}

type failWriter struct{ n int }

func (f *failWriter) Write(p []byte) (int, error) {
	if f.n -= len(p); f.n < 0 {
		return 0, errors.New("disk full")
	}
	return len(p), nil
}

func TestEncodeWriteError(t *testing.T) {
	err := Encode(&failWriter{n: 100000}, make([]float64, 100000), 8000, 1, PCM16)
	if err == nil || err.Error() != "wavio: disk full" {
		t.Errorf("err %v", err)
	}
}

func TestWriteFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.wav")
	x := []float64{0.25, -0.5, 0.75, 1}
	if err := os.WriteFile(path, []byte("old contents"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := WriteFile(path, x, 22050, 2, PCM16); err != nil {
		t.Fatal(err)
	}
	a, err := ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if a.Frames != 2 || a.Format.SampleRate != 22050 || a.Data[0] != 0.25 || a.Data[3] != 32767.0/32768 {
		t.Errorf("read back %+v", a)
	}
	if st, _ := os.Stat(path); st.Mode().Perm() != 0o644 {
		t.Errorf("mode %v", st.Mode())
	}
	assertOnly(t, dir, "out.wav")
}

// Failing writes leave neither a temporary file nor a partial file at path.
func TestWriteFileAtomicOnError(t *testing.T) {
	dir := t.TempDir()
	// Bad arguments: nothing is created.
	if err := WriteFile(filepath.Join(dir, "a.wav"), make([]float64, 3), 8000, 2, PCM16); err == nil {
		t.Error("partial frame accepted")
	}
	assertOnly(t, dir)
	// The rename fails (the target is a non-empty directory) after the whole
	// file was written: the temporary file is removed, the target untouched.
	target := filepath.Join(dir, "busy.wav")
	if err := os.MkdirAll(filepath.Join(target, "x"), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := WriteFile(target, make([]float64, 5000), 8000, 1, Float32); err == nil {
		t.Error("rename over a directory succeeded")
	}
	assertOnly(t, dir, "busy.wav")
	if st, err := os.Stat(target); err != nil || !st.IsDir() {
		t.Errorf("target changed: %v %v", st, err)
	}
	// The directory does not exist: nothing is created.
	if err := WriteFile(filepath.Join(dir, "nope", "c.wav"), nil, 8000, 1, PCM16); err == nil {
		t.Error("write into a missing directory succeeded")
	}
	assertOnly(t, dir, "busy.wav")
}

func assertOnly(t *testing.T, dir string, names ...string) {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, e := range ents {
		got = append(got, e.Name())
	}
	if len(got) != len(names) {
		t.Fatalf("dir holds %q, want %q", got, names)
	}
	for i := range got {
		if got[i] != names[i] {
			t.Fatalf("dir holds %q, want %q", got, names)
		}
	}
}
