package wavio

import (
	"bytes"
	"io"
	"os"
	"slices"
	"strings"
	"testing"
)

// readAllBlocks decodes r in blocks of the given number of frames.
func readAllBlocks(t *testing.T, r *Reader, block int) []float64 {
	t.Helper()
	ch := r.Format().Channels
	var out []float64
	dst := make([]float64, block*ch)
	for {
		n, err := r.ReadFrames(dst)
		out = append(out, dst[:n*ch]...)
		if err == io.EOF {
			if n != 0 {
				t.Fatalf("io.EOF with %d frames", n)
			}
			return out
		}
		if err != nil {
			t.Fatal(err)
		}
		if n == 0 {
			t.Fatal("0 frames without an error")
		}
	}
}

// Streaming in any block size, with or without the stream size, gives the
// same samples as ReadFile; ReadFrames32 gives their float32 rounding.
func TestStreamingMatchesWhole(t *testing.T) {
	for _, tc := range fixtureTable {
		whole, err := ReadFile(fixture(tc.name))
		if err != nil {
			t.Fatal(err)
		}
		raw, err := os.ReadFile(fixture(tc.name))
		if err != nil {
			t.Fatal(err)
		}
		for _, size := range []int64{int64(len(raw)), -1} {
			for _, block := range []int{1, 7, 1000, 5000} {
				r, err := NewReader(bytes.NewReader(raw), tc.name, size)
				if err != nil {
					t.Fatal(err)
				}
				got := readAllBlocks(t, r, block)
				if !slices.Equal(got, whole.Data) {
					t.Errorf("%s size %d block %d: streamed decode differs", tc.name, size, block)
				}
				if r.Frames() != int64(whole.Frames) {
					t.Errorf("%s size %d: Frames() = %d after reading, want %d", tc.name, size, r.Frames(), whole.Frames)
				}
			}
			r, _ := NewReader(bytes.NewReader(raw), tc.name, size)
			dst := make([]float32, 3*tc.format.Channels)
			var got []float32
			for {
				n, err := r.ReadFrames32(dst)
				got = append(got, dst[:n*tc.format.Channels]...)
				if err != nil {
					break
				}
			}
			if len(got) != len(whole.Data) {
				t.Fatalf("%s: ReadFrames32 gave %d samples, want %d", tc.name, len(got), len(whole.Data))
			}
			for i, v := range whole.Data {
				if got[i] != float32(v) {
					t.Fatalf("%s: ReadFrames32 sample %d = %v, want %v", tc.name, i, got[i], float32(v))
				}
			}
		}
	}
}

func TestSkip(t *testing.T) {
	whole, err := ReadFile(fixture("s16_stereo.wav"))
	if err != nil {
		t.Fatal(err)
	}
	for _, k := range []int64{0, 1, 999, 1599} {
		f, err := Open(fixture("s16_stereo.wav"))
		if err != nil {
			t.Fatal(err)
		}
		if err := f.Skip(k); err != nil {
			t.Fatal(err)
		}
		got := readAllBlocks(t, f.Reader, 64)
		if !slices.Equal(got, whole.Data[2*k:]) {
			t.Errorf("skip %d: rest differs", k)
		}
		f.Close()
	}
	f, err := Open(fixture("s16_stereo.wav"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := f.Skip(1601); err != io.EOF {
		t.Errorf("skip past end: %v, want io.EOF", err)
	}
	if n, err := f.ReadFrames(make([]float64, 2)); n != 0 || err != io.EOF {
		t.Errorf("after skip past end: %d, %v", n, err)
	}
}

// A stream of unknown size with data size 0xFFFFFFFF is read to its end.
func TestUnknownLengthStream(t *testing.T) {
	raw, err := os.ReadFile(fixture("data_ffffffff.wav"))
	if err != nil {
		t.Fatal(err)
	}
	r, err := NewReader(bytes.NewReader(raw), "live.wav", -1)
	if err != nil {
		t.Fatal(err)
	}
	if r.Frames() != -1 || !anyContains(r.Warnings(), "reading to the end of the stream") {
		t.Errorf("Frames %d, warnings %q", r.Frames(), r.Warnings())
	}
	if got := readAllBlocks(t, r, 100); len(got) != 700 || r.Frames() != 700 {
		t.Errorf("%d samples, Frames %d; want 700", len(got), r.Frames())
	}
}

// A stream shorter than its data size ends with a warning, not an error.
func TestTruncatedStream(t *testing.T) {
	raw, err := os.ReadFile(fixture("truncated.wav"))
	if err != nil {
		t.Fatal(err)
	}
	r, err := NewReader(bytes.NewReader(raw), "cut.wav", -1)
	if err != nil {
		t.Fatal(err)
	}
	if r.Frames() != 800 {
		t.Errorf("Frames before reading %d, want the declared 800", r.Frames())
	}
	got := readAllBlocks(t, r, 128)
	if len(got) != 1000 || r.Frames() != 500 {
		t.Errorf("%d samples, Frames %d; want 1000, 500", len(got), r.Frames())
	}
	for _, w := range []string{"cut.wav: stream ends inside a frame", "ends early", "500 frames of 800"} {
		if !anyContains(r.Warnings(), w) {
			t.Errorf("warnings %q lack %q", r.Warnings(), w)
		}
	}
}

// Data sizes that are past the file end or not whole frames are clamped.
func TestDataSizeClamp(t *testing.T) {
	in := s16file(2, 1, 2, 3, 4, 5, 6)
	for _, tc := range []struct {
		name   string
		in     []byte
		frames int64
		warn   string
	}{
		{"exact", in, 3, ""},
		{"past eof", patch32(in, 40, 1000), 3, "data size 1000 runs past the end of the file; clamped to 12 bytes"},
		{"unknown", patch32(in, 40, 0xFFFFFFFF), 3, "0xFFFFFFFF"},
		{"partial frame", patch32(in, 40, 10), 2, "not a whole number of 4-byte frames; last 2 bytes ignored"},
		{"empty", patch32(in, 40, 0), 0, ""},
	} {
		r, err := NewReader(bytes.NewReader(tc.in), "", int64(len(tc.in)))
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if r.Frames() != tc.frames {
			t.Errorf("%s: Frames %d, want %d", tc.name, r.Frames(), tc.frames)
		}
		if got := readAllBlocks(t, r, 2); int64(len(got)) != 2*tc.frames {
			t.Errorf("%s: read %d samples", tc.name, len(got))
		}
		if tc.warn == "" && len(r.Warnings()) != 0 || tc.warn != "" && !anyContains(r.Warnings(), tc.warn) {
			t.Errorf("%s: warnings %q, want %q", tc.name, r.Warnings(), tc.warn)
		}
	}
}

// Padding bits below ValidBits are cleared: the low 4 bits of a 20-in-24
// sample are not part of the value (Microsoft WAVEFORMATEXTENSIBLE
// documentation, wValidBitsPerSample; from memory).
func TestValidBitsMask(t *testing.T) {
	data := []byte{0xFF, 0xFF, 0x7F, 0x0F, 0x00, 0x80} // 0x7FFFFF, 0x80000F
	in := triff(tchunk("fmt ", tfmtExt(1, 1, 8000, 24, 20)), tchunk("data", data))
	r, err := NewReader(bytes.NewReader(in), "", -1)
	if err != nil {
		t.Fatal(err)
	}
	got := readAllBlocks(t, r, 4)
	want := []float64{float64(0x7FFFF0) / (1 << 23), -1}
	if !slices.Equal(got, want) {
		t.Errorf("got %v, want %v", got, want)
	}
	if f := r.Format(); f.ValidBits != 20 || f.BitDepth != 24 {
		t.Errorf("format %+v", f)
	}
}

// Exact scales at the code extremes of every width (int/2^(b-1); 8-bit
// unsigned with offset 128; Microsoft WAVEFORMATEX documentation, from
// memory).
func TestScales(t *testing.T) {
	for _, tc := range []struct {
		bits int
		data []byte
		want []float64
	}{
		{8, []byte{0, 128, 255, 1}, []float64{-1, 0, 127.0 / 128, -127.0 / 128}},
		{16, []byte{0x00, 0x80, 0xFF, 0x7F, 0xFF, 0xFF}, []float64{-1, 32767.0 / 32768, -1.0 / 32768}},
		{24, []byte{0, 0, 0x80, 0xFF, 0xFF, 0x7F, 1, 0, 0}, []float64{-1, 8388607.0 / 8388608, 1.0 / 8388608}},
		{32, []byte{0, 0, 0, 0x80, 0xFF, 0xFF, 0xFF, 0x7F}, []float64{-1, 2147483647.0 / 2147483648}},
	} {
		in := triff(tchunk("fmt ", tfmt(1, 1, 8000, tc.bits)), tchunk("data", tc.data))
		r, err := NewReader(bytes.NewReader(in), "", -1)
		if err != nil {
			t.Fatal(err)
		}
		if got := readAllBlocks(t, r, 3); !slices.Equal(got, tc.want) {
			t.Errorf("%d-bit: got %v, want %v", tc.bits, got, tc.want)
		}
	}
}

// A byte rate that disagrees with rate × block align is only a warning.
func TestByteRateWarning(t *testing.T) {
	r, err := NewReader(bytes.NewReader(patch32(s16file(1, 5), 28, 12345)), "", -1)
	if err != nil {
		t.Fatal(err)
	}
	if !anyContains(r.Warnings(), "byte rate 12345") {
		t.Errorf("warnings %q", r.Warnings())
	}
}

func TestMono(t *testing.T) {
	a := &Audio{Format: Format{Channels: 3}, Frames: 2, Data: []float64{1, 2, 6, -1, -1, -1}}
	got := a.Mono(nil)
	if !slices.Equal(got, []float64{3, -1}) {
		t.Errorf("Mono = %v", got)
	}
	buf := make([]float64, 0, 8)
	if got := a.Mono(buf); &got[0] != &buf[:1][0] {
		t.Error("Mono did not reuse dst")
	}
	m := &Audio{Format: Format{Channels: 1}, Frames: 2, Data: []float64{0.5, 0.25}}
	if got := m.Mono(nil); !slices.Equal(got, m.Data) {
		t.Errorf("mono Mono = %v", got)
	}
}

func TestReadFramesShortDstPanics(t *testing.T) {
	r, err := NewReader(bytes.NewReader(s16file(2, 1, 2)), "", -1)
	if err != nil {
		t.Fatal(err)
	}
	if n, err := r.ReadFrames(nil); n != 0 || err != nil {
		t.Errorf("empty dst: %d, %v", n, err)
	}
	defer func() {
		if p := recover(); p == nil || !strings.HasPrefix(p.(string), "wavio: ") {
			t.Errorf("panic %v, want a wavio panic", p)
		}
	}()
	r.ReadFrames(make([]float64, 1))
}

// Header oddities that are tolerated: a second fmt chunk, an extensible
// header with 0 valid bits, and a plain PCM width that is not whole bytes
// (12 bits in a 16-bit container, left-justified as in WAVEFORMATEX).
func TestTolerated(t *testing.T) {
	data := tchunk("data", []byte{0x3F, 0x12, 0, 0x80})
	for _, tc := range []struct {
		name   string
		in     []byte
		format Format
		want   []float64
		warn   string
	}{
		{"second fmt", triff(tchunk("fmt ", tfmt(1, 1, 8000, 16)), tchunk("fmt ", tfmt(3, 2, 8000, 32)), data),
			Format{8000, 1, 16, 16, false, false, ""}, []float64{float64(0x123F) / 32768, -1}, "second fmt chunk"},
		{"ext 0 valid bits", triff(tchunk("fmt ", tfmtExt(1, 1, 8000, 16, 0)), data),
			Format{8000, 1, 16, 16, false, true, ""}, []float64{float64(0x123F) / 32768, -1}, "0 valid bits"},
		{"12-bit", triff(tchunk("fmt ", tfmt(1, 1, 8000, 12)), data),
			Format{8000, 1, 16, 12, false, false, ""}, []float64{float64(0x1230) / 32768, -1}, ""},
	} {
		r, err := NewReader(bytes.NewReader(tc.in), "", -1)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if r.Format() != tc.format {
			t.Errorf("%s: format %+v, want %+v", tc.name, r.Format(), tc.format)
		}
		if got := readAllBlocks(t, r, 8); !slices.Equal(got, tc.want) {
			t.Errorf("%s: got %v, want %v", tc.name, got, tc.want)
		}
		if tc.warn == "" && len(r.Warnings()) > 0 || tc.warn != "" && !anyContains(r.Warnings(), tc.warn) {
			t.Errorf("%s: warnings %q, want %q", tc.name, r.Warnings(), tc.warn)
		}
	}
}

// SeekFrame moves anywhere in the data, back and forth: what follows is the
// rest of the file from that frame; beyond the end or negative is refused.
func TestSeekFrame(t *testing.T) {
	whole, err := ReadFile(fixture("s16_stereo.wav"))
	if err != nil {
		t.Fatal(err)
	}
	f, err := Open(fixture("s16_stereo.wav"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	ch := whole.Format.Channels
	buf := make([]float64, 10*ch)
	for _, tc := range []struct {
		name string
		k    int64
		ok   bool
	}{
		{"middle", 999, true},
		{"back to the start", 0, true},
		{"last frame", int64(whole.Frames) - 1, true},
		{"end", int64(whole.Frames), true},
		{"back again", 1, true},
		{"past the end", int64(whole.Frames) + 1, false},
		{"negative", -1, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := f.SeekFrame(tc.k)
			if (err == nil) != tc.ok {
				t.Fatalf("seek to %d: error %v", tc.k, err)
			}
			if !tc.ok {
				return
			}
			n, _ := f.ReadFrames(buf)
			want := whole.Data[int(tc.k)*ch : min(len(whole.Data), (int(tc.k)+10)*ch)]
			if !slices.Equal(buf[:n*ch], want) {
				t.Errorf("after seek to %d: %v, want %v", tc.k, buf[:n*ch], want)
			}
		})
	}
}
