package wavio

import (
	"bytes"
	"encoding/binary"
	"errors"
	"io"
	"os"
	"strings"
	"testing"
)

var le = binary.LittleEndian

// Test builders for RIFF layouts (Microsoft/IBM RIFF specification, 1991:
// 4-byte id, little-endian uint32 size, body, pad byte to even length).
func tchunk(id string, body []byte) []byte {
	b := append([]byte(id), le.AppendUint32(nil, uint32(len(body)))...)
	b = append(b, body...)
	if len(body)%2 == 1 {
		b = append(b, 0)
	}
	return b
}

func triff(chunks ...[]byte) []byte {
	body := []byte("WAVE")
	for _, c := range chunks {
		body = append(body, c...)
	}
	return append(append([]byte("RIFF"), le.AppendUint32(nil, uint32(len(body)))...), body...)
}

func tfmt(tag uint16, channels, rate, bits int) []byte {
	ba := channels * ((bits + 7) / 8)
	b := le.AppendUint16(nil, tag)
	b = le.AppendUint16(b, uint16(channels))
	b = le.AppendUint32(b, uint32(rate))
	b = le.AppendUint32(b, uint32(rate*ba))
	b = le.AppendUint16(b, uint16(ba))
	return le.AppendUint16(b, uint16(bits))
}

func tfmtExt(sub uint16, channels, rate, bits, valid int) []byte {
	b := tfmt(0xFFFE, channels, rate, bits)
	b = le.AppendUint16(b, 22)
	b = le.AppendUint16(b, uint16(valid))
	b = le.AppendUint32(b, 0)
	b = le.AppendUint16(b, sub)
	return append(b, guidTail[:]...)
}

// s16file is a valid 16-bit file with the given samples.
func s16file(channels int, samples ...int16) []byte {
	var d []byte
	for _, s := range samples {
		d = le.AppendUint16(d, uint16(s))
	}
	return triff(tchunk("fmt ", tfmt(1, channels, 8000, 16)), tchunk("data", d))
}

func patch16(b []byte, off int, v uint16) []byte {
	b = bytes.Clone(b)
	le.PutUint16(b[off:], v)
	return b
}

func patch32(b []byte, off int, v uint32) []byte {
	b = bytes.Clone(b)
	le.PutUint32(b[off:], v)
	return b
}

func TestHeaderErrors(t *testing.T) {
	good := s16file(1, 1, 2, 3, 4)
	// In a canonical file the fmt body starts at offset 20: tag 20,
	// channels 22, rate 24, byte rate 28, block align 32, bits 34.
	ext := triff(tchunk("fmt ", tfmtExt(1, 2, 8000, 24, 24)), tchunk("data", make([]byte, 12)))
	const (
		corrupt     = "format"
		unsupported = "unsupported"
	)
	cases := []struct {
		name   string
		in     []byte
		kind   string
		offset int64
		field  string
		msg    string
	}{
		{"empty", nil, corrupt, 0, "riff.id", "unexpected end of file"},
		{"not riff", []byte("OggS\x00\x02\x00\x00\x00\x00\x00\x00"), corrupt, 0, "riff.id", "not a RIFF file"},
		{"short riff", []byte("RIFF\x10\x00"), corrupt, 4, "riff.form", "unexpected end of file"},
		{"not wave", append([]byte("RIFF\x04\x00\x00\x00AVI "), good[12:]...), corrupt, 8, "riff.form", "not WAVE"},
		{"rifx", append([]byte("RIFX"), good[4:]...), unsupported, 0, "riff.id", "big-endian"},
		{"rf64", append([]byte("RF64"), good[4:]...), unsupported, 0, "riff.id", "RF64"},
		{"no chunks", []byte("RIFF\x04\x00\x00\x00WAVE"), corrupt, 12, "fmt", "no fmt chunk"},
		{"fmt too small", patch32(good, 16, 14), corrupt, 16, "fmt.size", "want at least 16"},
		{"fmt truncated", good[:30], corrupt, 20, "fmt", "unexpected end of file"},
		{"no data", triff(tchunk("fmt ", tfmt(1, 1, 8000, 16))), corrupt, 36, "data", "no data chunk"},
		{"data before fmt", triff(tchunk("data", []byte{0, 0}), tchunk("fmt ", tfmt(1, 1, 8000, 16))), corrupt, 12, "data", "before fmt"},
		{"zero channels", patch16(good, 22, 0), corrupt, 22, "fmt.channels", "0 channels"},
		{"zero rate", patch32(good, 24, 0), corrupt, 24, "fmt.sample_rate", "sample rate 0"},
		{"zero bits", patch16(good, 34, 0), corrupt, 34, "fmt.bits_per_sample", "0 bits"},
		{"block align", patch16(good, 32, 3), corrupt, 32, "fmt.block_align", "block align 3, want 2"},
		{"alaw", patch16(good, 20, 6), unsupported, 20, "fmt.audio_format", "unsupported format tag 6 (A-law)"},
		{"mulaw", patch16(good, 20, 7), unsupported, 20, "fmt.audio_format", "tag 7 (µ-law)"},
		{"ms adpcm", patch16(good, 20, 2), unsupported, 20, "fmt.audio_format", "tag 2 (MS ADPCM)"},
		{"mp3", patch16(good, 20, 0x55), unsupported, 20, "fmt.audio_format", "tag 85 (MPEG layer 3)"},
		{"pcm 40 bit", triff(tchunk("fmt ", tfmt(1, 1, 8000, 40)), tchunk("data", make([]byte, 5))), unsupported, 34, "fmt.bits_per_sample", "40-bit PCM"},
		{"float 16 bit", triff(tchunk("fmt ", tfmt(3, 1, 8000, 16)), tchunk("data", make([]byte, 2))), unsupported, 34, "fmt.bits_per_sample", "16-bit float"},
		{"ext short fmt", triff(tchunk("fmt ", append(tfmt(0xFFFE, 1, 8000, 16), 0, 0)), tchunk("data", nil)), corrupt, 16, "fmt.size", "want 40"},
		{"ext cbsize", patch16(ext, 36, 10), corrupt, 36, "fmt.cb_size", "cbSize 10"},
		{"ext valid bits", patch16(ext, 38, 25), corrupt, 38, "fmt.valid_bits", "25 valid bits in a 24-bit"},
		{"ext alaw guid", patch16(ext, 44, 6), unsupported, 44, "fmt.sub_format", "tag 6 (A-law)"},
		{"ext foreign guid", patch32(ext, 56, 0xDEADBEEF), unsupported, 44, "fmt.sub_format", "SubFormat GUID {00000001-0000-0010-8000-"},
		{"chunk past eof", triff(tchunk("fmt ", tfmt(1, 1, 8000, 16)), []byte("LIST\xff\x00\x00\x00abc")), corrupt, 40, "chunk", "runs past the end"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			for _, size := range []int64{int64(len(tc.in)), -1} {
				_, err := NewReader(bytes.NewReader(tc.in), "pump.wav", size)
				var off int64
				var field, kind string
				var fe *FormatError
				var ue *UnsupportedError
				switch {
				case errors.As(err, &fe):
					kind, off, field = corrupt, fe.Offset, fe.Field
				case errors.As(err, &ue):
					kind, off, field = unsupported, ue.Offset, ue.Field
				default:
					t.Fatalf("size %d: error %v (%T), want a %s error", size, err, err, tc.kind)
				}
				if kind != tc.kind || off != tc.offset || field != tc.field || !strings.Contains(err.Error(), tc.msg) {
					t.Errorf("size %d: got %s error %q (offset %d, field %s); want %s, offset %d, field %s, containing %q",
						size, kind, err, off, field, tc.kind, tc.offset, tc.field, tc.msg)
				}
				if !strings.HasPrefix(err.Error(), "wavio: pump.wav: offset ") {
					t.Errorf("message %q lacks the wavio prefix, name and offset", err)
				}
			}
		})
	}
}

func TestErrorMessage(t *testing.T) {
	_, err := NewReader(bytes.NewReader(patch16(s16file(1, 0), 20, 6)), "pump.wav", -1)
	const want = "wavio: pump.wav: offset 20: fmt.audio_format: unsupported format tag 6 (A-law)"
	if err == nil || err.Error() != want {
		t.Errorf("error %q, want %q", err, want)
	}
}

// Fixture files: corrupt ones give *FormatError, sox-made companded and
// ADPCM files give *UnsupportedError.
func TestFixtureErrors(t *testing.T) {
	for _, tc := range []struct {
		name        string
		unsupported bool
		field       string
	}{
		{"garbage.wav", false, "riff.id"},
		{"corrupt_fmt.wav", false, "fmt.block_align"},
		{"alaw.wav", true, "fmt.audio_format"},
		{"ulaw.wav", true, "fmt.audio_format"},
		{"msadpcm.wav", true, "fmt.audio_format"},
	} {
		_, err := Open(fixture(tc.name))
		var fe *FormatError
		var ue *UnsupportedError
		switch {
		case tc.unsupported && errors.As(err, &ue) && ue.Field == tc.field && ue.Name == fixture(tc.name):
		case !tc.unsupported && errors.As(err, &fe) && fe.Field == tc.field && fe.Name == fixture(tc.name):
		default:
			t.Errorf("%s: error %v (%T), want unsupported=%v on field %s", tc.name, err, err, tc.unsupported, tc.field)
		}
	}
	if _, err := Open(fixture("no-such-file.wav")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

// errReader fails once after n bytes, then continues.
type errReader struct {
	r      io.Reader
	n      int
	failed bool
}

var errFlaky = errors.New("flaky disk")

func (e *errReader) Read(p []byte) (int, error) {
	if !e.failed && e.n == 0 {
		e.failed = true
		return 0, errFlaky
	}
	if !e.failed && len(p) > e.n {
		p = p[:e.n]
	}
	n, err := e.r.Read(p)
	e.n -= n
	return n, err
}

// An I/O error in the data is returned (not swallowed, not sticky): the
// frames before it are delivered and a retry continues where it stopped,
// including the half frame read before the failure.
func TestReadErrorNotSticky(t *testing.T) {
	in := s16file(2, 1, 2, 3, 4, 5, 6, 7, 8)
	// Fail 3 bytes into the data: one and a half stereo frames.
	rd, err := NewReader(&errReader{r: bytes.NewReader(in), n: 44 + 6}, "x.wav", -1)
	if err != nil {
		t.Fatal(err)
	}
	dst := make([]float64, 8)
	n, err := rd.ReadFrames(dst)
	if !errors.Is(err, errFlaky) || n != 1 {
		t.Fatalf("first read: %d frames, %v; want 1, flaky disk", n, err)
	}
	m, err := rd.ReadFrames(dst[2:])
	if err != nil || m != 3 {
		t.Fatalf("retry: %d frames, %v; want 3, nil", m, err)
	}
	for i, v := range dst {
		if want := float64(i+1) / 32768; v != want {
			t.Errorf("sample %d = %v, want %v", i, v, want)
		}
	}
	if n, err := rd.ReadFrames(dst); n != 0 || err != io.EOF {
		t.Errorf("at end: %d, %v; want 0, EOF", n, err)
	}
}
