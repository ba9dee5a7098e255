package wavio

import (
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
)

// Encoding is the sample encoding Encode writes.
type Encoding int

const (
	PCM16   Encoding = iota + 1 // 16-bit signed PCM, format tag 1
	PCM24                       // 24-bit signed PCM, format tag 1
	Float32                     // 32-bit IEEE float, format tag 3, with a fact chunk
)

func (e Encoding) String() string {
	switch e {
	case PCM16:
		return "pcm16"
	case PCM24:
		return "pcm24"
	case Float32:
		return "float32"
	}
	return fmt.Sprintf("Encoding(%d)", int(e))
}

func (e Encoding) bytes() int {
	switch e {
	case PCM16:
		return 2
	case PCM24:
		return 3
	case Float32:
		return 4
	}
	return 0
}

// Encode writes interleaved samples as a complete WAV file to w in one
// buffered pass. PCM samples are scaled by 2^(b-1), rounded to the nearest
// integer (ties to even) and clamped to [-2^(b-1), 2^(b-1)-1], so
// +1.0 becomes 2^(b-1)-1; NaN becomes 0. Float32 samples are rounded to the
// nearest float32 and not clamped. An odd-sized data chunk gets its pad
// byte.
func Encode(w io.Writer, interleaved []float64, rate, channels int, enc Encoding) error {
	hdr, err := header(len(interleaved), rate, channels, enc)
	if err != nil {
		return err
	}
	sb := enc.bytes()
	buf := make([]byte, 0, blockBytes)
	buf = append(buf, hdr...)
	for {
		n := min(len(interleaved), (cap(buf)-len(buf))/sb)
		buf = encodeSamples(buf, interleaved[:n], enc)
		interleaved = interleaved[n:]
		if len(interleaved) == 0 {
			break
		}
		if _, err := w.Write(buf); err != nil {
			return fmt.Errorf("wavio: %w", err)
		}
		buf = buf[:0]
	}
	if binary.LittleEndian.Uint32(hdr[len(hdr)-4:])%2 == 1 {
		buf = append(buf, 0) // RIFF pad byte
	}
	if _, err := w.Write(buf); err != nil {
		return fmt.Errorf("wavio: %w", err)
	}
	return nil
}

// header builds everything up to the first data byte.
func header(samples, rate, channels int, enc Encoding) ([]byte, error) {
	sb := enc.bytes()
	switch {
	case sb == 0:
		return nil, fmt.Errorf("wavio: unknown encoding %d", int(enc))
	case channels < 1 || channels > math.MaxUint16 || channels*sb > math.MaxUint16:
		return nil, fmt.Errorf("wavio: %d channels out of range", channels)
	case rate < 1 || int64(rate)*int64(channels*sb) > math.MaxUint32:
		return nil, fmt.Errorf("wavio: sample rate %d out of range", rate)
	case samples%channels != 0:
		return nil, fmt.Errorf("wavio: %d samples is not a whole number of %d-channel frames", samples, channels)
	}
	data := int64(samples) * int64(sb)
	fmtSize, extra := 16, 0
	tag := uint16(1)
	if enc == Float32 {
		// Non-PCM formats carry cbSize and a fact chunk (Microsoft RIFF
		// multimedia specification, 1991; from memory).
		fmtSize, extra, tag = 18, 12, 3
	}
	riff := 4 + 8 + int64(fmtSize) + int64(extra) + 8 + data + data%2
	if riff > math.MaxUint32 {
		return nil, fmt.Errorf("wavio: %d bytes of samples do not fit a RIFF file (4 GiB limit)", data)
	}
	le := binary.LittleEndian
	b := make([]byte, 0, 12+8+fmtSize+extra+8)
	b = append(b, "RIFF"...)
	b = le.AppendUint32(b, uint32(riff))
	b = append(b, "WAVEfmt "...)
	b = le.AppendUint32(b, uint32(fmtSize))
	b = le.AppendUint16(b, tag)
	b = le.AppendUint16(b, uint16(channels))
	b = le.AppendUint32(b, uint32(rate))
	b = le.AppendUint32(b, uint32(rate*channels*sb))
	b = le.AppendUint16(b, uint16(channels*sb))
	b = le.AppendUint16(b, uint16(8*sb))
	if enc == Float32 {
		b = le.AppendUint16(b, 0) // cbSize
		b = append(b, "fact"...)
		b = le.AppendUint32(b, 4)
		b = le.AppendUint32(b, uint32(samples/channels))
	}
	b = append(b, "data"...)
	b = le.AppendUint32(b, uint32(data))
	return b, nil
}

// quantize maps v to the nearest integer of v·scale, ties to even, within
// [lo, hi]. Adding and subtracting 1.5·2^52 rounds a float64 of magnitude
// below 2^51 to an integer in the current (IEEE 754 default, nearest-even)
// rounding mode (common practice); it is about twice as fast as math.Round.
func quantize(v, scale float64, lo, hi int32) int32 {
	const magic = 1 << 52 * 1.5
	x := v * scale
	switch {
	case x >= float64(hi):
		return hi
	case x <= float64(lo):
		return lo
	case x != x:
		return 0
	}
	return int32((x + magic) - magic)
}

// encodeSamples appends src to b, which must have room for it.
func encodeSamples(b []byte, src []float64, enc Encoding) []byte {
	le := binary.LittleEndian
	n := len(b)
	b = b[:n+len(src)*enc.bytes()]
	d := b[n:]
	switch enc {
	case PCM16:
		encode16(d, src)
	case PCM24:
		for i, v := range src {
			q := uint32(quantize(v, 8388608, -8388608, 8388607))
			e := d[3*i : 3*i+3 : 3*i+3]
			e[0], e[1], e[2] = byte(q), byte(q>>8), byte(q>>16)
		}
	case Float32:
		for i, v := range src {
			le.PutUint32(d[4*i:], math.Float32bits(float32(v)))
		}
	}
	return b
}

// WriteFile encodes the samples to a temporary file in the directory of
// path, syncs it, and renames it over path, so path holds either its old
// contents or the complete new file, never a partial one. The temporary
// file is removed on any error. The new file has mode 0644.
func WriteFile(path string, interleaved []float64, rate, channels int, enc Encoding) (err error) {
	if _, err := header(len(interleaved), rate, channels, enc); err != nil {
		return err
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp*")
	if err != nil {
		return fmt.Errorf("wavio: %w", err)
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	if err = Encode(f, interleaved, rate, channels, enc); err != nil {
		return err
	}
	if err = f.Chmod(0o644); err != nil {
		return fmt.Errorf("wavio: %w", err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("wavio: %w", err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("wavio: %w", err)
	}
	if err = os.Rename(tmp, path); err != nil {
		return fmt.Errorf("wavio: %w", err)
	}
	// Sync the directory so the rename itself survives a crash.
	if d, derr := os.Open(dir); derr == nil {
		serr := d.Sync()
		d.Close()
		if serr != nil && !errors.Is(serr, os.ErrInvalid) {
			return fmt.Errorf("wavio: sync %s: %w", dir, serr)
		}
	}
	return nil
}

// encode16 writes src as 16-bit little-endian samples to d (2·len(src)
// bytes), with the rounding and clamping of quantize inlined so that the
// loop has no calls and no bounds checks.
func encode16(d []byte, src []float64) {
	const magic = 1 << 52 * 1.5
	d = d[:2*len(src)]
	for i, v := range src {
		x := v * 32768
		var q int32
		switch {
		case x >= 32767:
			q = 32767
		case x <= -32768:
			q = -32768
		case x != x:
			q = 0
		default:
			q = int32((x + magic) - magic)
		}
		e := d[2*i : 2*i+2 : 2*i+2]
		e[0], e[1] = byte(q), byte(q>>8)
	}
}
