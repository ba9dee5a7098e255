package wavio

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// FuzzReader: no input may panic; every failure is a *FormatError or
// *UnsupportedError; the stream decodes the same with and without its size;
// and decode → Encode → decode is exact for PCM up to 24 bits and gives the
// float32 rounding otherwise.
func FuzzReader(f *testing.F) {
	seeds, err := filepath.Glob(filepath.Join(fixtureDir, "*.wav"))
	if err != nil || len(seeds) == 0 {
		f.Fatalf("no seed fixtures: %v", err)
	}
	for _, s := range seeds {
		b, err := os.ReadFile(s)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, in []byte) {
		first, format, err := decodeAll(in, int64(len(in)))
		if err != nil {
			var fe *FormatError
			var ue *UnsupportedError
			if !errors.As(err, &fe) && !errors.As(err, &ue) {
				t.Fatalf("error of type %T: %v", err, err)
			}
			return
		}
		second, _, err := decodeAll(in, -1)
		if err != nil {
			t.Fatalf("decodes with its size but not without: %v", err)
		}
		if !sameSamples(first, second) {
			t.Fatalf("decode with size (%d samples) differs from without (%d)", len(first), len(second))
		}

		enc := Float32
		switch {
		case !format.Float && format.BitDepth <= 16:
			enc = PCM16
		case !format.Float && format.BitDepth == 24:
			enc = PCM24
		}
		var buf bytes.Buffer
		if err := Encode(&buf, first, format.SampleRate, format.Channels, enc); err != nil {
			if format.Channels*enc.bytes() <= math.MaxUint16 && int64(format.SampleRate)*int64(format.Channels*enc.bytes()) <= math.MaxUint32 {
				t.Fatalf("Encode %+v as %v: %v", format, enc, err)
			}
			return
		}
		again, f2, err := decodeAll(buf.Bytes(), int64(buf.Len()))
		if err != nil {
			t.Fatalf("re-decode: %v", err)
		}
		if f2.Channels != format.Channels || f2.SampleRate != format.SampleRate {
			t.Fatalf("format %+v became %+v", format, f2)
		}
		want := first
		if enc == Float32 {
			want = make([]float64, len(first))
			for i, v := range first {
				want[i] = float64(float32(v))
			}
		}
		if !sameSamples(want, again) {
			t.Fatalf("round trip through %v changed the samples", enc)
		}
	})
}

func decodeAll(in []byte, size int64) ([]float64, Format, error) {
	r, err := NewReader(bytes.NewReader(in), "fuzz.wav", size)
	if err != nil {
		return nil, Format{}, err
	}
	a, err := readAll(r)
	if err != nil {
		return nil, Format{}, err
	}
	return a.Data, a.Format, nil
}

// sameSamples compares sample by sample, NaN equal to NaN.
func sameSamples(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] && !(a[i] != a[i] && b[i] != b[i]) {
			return false
		}
	}
	return true
}
