package wavio

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
)

// Format describes the samples of a WAV file.
type Format struct {
	SampleRate int // frames per second (Hz)
	Channels   int
	// BitDepth is the container width of one sample in bits: 8, 16, 24 or 32
	// for PCM, 32 or 64 for float.
	BitDepth int
	// ValidBits is the number of meaningful bits in the container; it equals
	// BitDepth unless a WAVE_FORMAT_EXTENSIBLE header says fewer.
	ValidBits int
	// Float is true for IEEE float samples (tag 3 or the float SubFormat).
	Float bool
	// Extensible is true when the header was WAVE_FORMAT_EXTENSIBLE (0xFFFE).
	Extensible bool
	// Codec is "" for WAV and CodecFLAC for a FLAC stream (decoded to the
	// same PCM: BitDepth is then the container the samples are widened to,
	// ValidBits the stream's bits per sample).
	Codec string `json:",omitempty"`
}

type sampleKind uint8

const (
	kindU8 sampleKind = iota + 1
	kindS16
	kindS24
	kindS32
	kindF32
	kindF64
)

// Limits that keep a hostile header from making the reader allocate much.
const (
	maxFmtSize  = 1 << 16 // bytes; real fmt chunks are 16 to about 50 bytes
	blockBytes  = 64 << 10
	unknownSize = 0xFFFFFFFF
)

// SubFormat GUID tail shared by the KSDATAFORMAT_SUBTYPE_* GUIDs that map a
// plain format tag into WAVE_FORMAT_EXTENSIBLE (Microsoft, "Converting
// between format tags and subformat GUIDs", from memory): the first two
// bytes hold the tag, little-endian.
var guidTail = [14]byte{0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71}

// Reader decodes the samples of one WAV stream in blocks. It reads the
// header in NewReader and then only the data chunk; chunks after the data
// are never read. A Reader is not safe for use by several goroutines.
type Reader struct {
	name   string
	src    *bufio.Reader
	format Format
	kind   sampleKind
	mask   uint32 // clears the padding bits below ValidBits
	align  int    // bytes per frame
	frames int64  // frames available; -1 unknown
	read   int64  // frames consumed so far
	remain int64  // data bytes still to read; -1 means read to end of stream
	sized  bool   // frames was checked against the stream size
	pos    int64  // file offset of the next byte from src
	data   int64  // file offset of the first sample byte
	buf    []byte
	// After a read error the bytes of an incomplete frame are kept at
	// buf[partOff:partOff+have] until the next fill.
	have, partOff int
	eof           bool
	warnings      []string
}

// NewReader parses the RIFF/WAVE header of r up to the start of the data
// chunk, or, for a stream that starts with "fLaC", the FLAC metadata (the
// frames are then decoded as they are read; see Format.Codec). name is used in errors and warnings. size is the total size of the
// stream in bytes, or -1 if unknown; with a known size a data chunk that
// claims more bytes than the file holds is clamped at once, otherwise the
// clamp happens when the stream ends.
//
// A malformed header gives a *FormatError, a valid header of a format this
// package does not decode gives an *UnsupportedError; other errors come
// from r.
func NewReader(r io.Reader, name string, size int64) (*Reader, error) {
	rd := &Reader{name: name, src: bufio.NewReaderSize(r, blockBytes), frames: -1, remain: -1}
	if magic, _ := rd.src.Peek(4); string(magic) == flacMagic {
		if err := rd.openFLAC(); err != nil {
			return nil, err
		}
		return rd, nil
	}
	if err := rd.parse(size); err != nil {
		return nil, err
	}
	return rd, nil
}

// Format returns the sample format from the fmt chunk.
func (r *Reader) Format() Format { return r.format }

// Frames returns the number of frames in the data chunk after clamping, or
// -1 if the length is unknown (data size 0xFFFFFFFF on a stream of unknown
// size). When the stream ends early it is lowered to the frames actually
// read.
func (r *Reader) Frames() int64 { return r.frames }

// DataOffset returns the file offset of the first sample byte: frame f,
// channel c starts at DataOffset() + (f·Channels + c)·BitDepth/8. It is
// −1 for a FLAC stream, whose samples have no fixed offset.
func (r *Reader) DataOffset() int64 { return r.data }

// Warnings returns what the reader tolerated: clamped data sizes, a trailing
// partial frame, a byte rate that disagrees with the rest of the header.
func (r *Reader) Warnings() []string { return r.warnings }

func (r *Reader) warnf(format string, args ...any) {
	msg := fmt.Sprintf(format, args...)
	if r.name != "" {
		msg = r.name + ": " + msg
	}
	r.warnings = append(r.warnings, msg)
}

func (r *Reader) formatErr(off int64, field, format string, args ...any) error {
	return &FormatError{Name: r.name, Offset: off, Field: field, Msg: fmt.Sprintf(format, args...)}
}

func (r *Reader) unsupported(off int64, field, format string, args ...any) error {
	return &UnsupportedError{Name: r.name, Offset: off, Field: field, Msg: fmt.Sprintf(format, args...)}
}

// readFull reads len(p) header bytes; running out is a FormatError naming
// field.
func (r *Reader) readFull(p []byte, field string) error {
	start := r.pos
	n, err := io.ReadFull(r.src, p)
	r.pos += int64(n)
	switch {
	case err == io.EOF || err == io.ErrUnexpectedEOF:
		return r.formatErr(start, field, "unexpected end of file after %d of %d bytes", n, len(p))
	case err != nil:
		return r.ioErr(err)
	}
	return nil
}

func (r *Reader) ioErr(err error) error {
	if r.name == "" {
		return fmt.Errorf("wavio: offset %d: %w", r.pos, err)
	}
	return fmt.Errorf("wavio: %s: offset %d: %w", r.name, r.pos, err)
}

// skipChunk discards a chunk body of n bytes (pad included) whose size
// field is at file offset sizeOff.
func (r *Reader) skipChunk(id string, n, sizeOff int64) error {
	for n > 0 {
		k := int(min(n, 1<<30))
		d, err := r.src.Discard(k)
		r.pos += int64(d)
		n -= int64(d)
		if err == io.EOF {
			return r.formatErr(sizeOff, "chunk", "chunk %q runs past the end of the file by %d bytes", id, n)
		}
		if err != nil {
			return r.ioErr(err)
		}
	}
	return nil
}

func (r *Reader) parse(size int64) error {
	var hdr [12]byte
	if err := r.readFull(hdr[:4], "riff.id"); err != nil {
		return err
	}
	switch id := string(hdr[:4]); id {
	case "RIFF":
	case "RIFX":
		return r.unsupported(0, "riff.id", "big-endian RIFX container")
	case "RF64", "BW64":
		return r.unsupported(0, "riff.id", "%s container (files over 4 GiB)", id)
	default:
		return r.formatErr(0, "riff.id", "not a RIFF file (id %q)", id)
	}
	if err := r.readFull(hdr[4:12], "riff.form"); err != nil {
		return err
	}
	if form := string(hdr[8:12]); form != "WAVE" {
		return r.formatErr(8, "riff.form", "RIFF form %q is not WAVE", form)
	}

	haveFmt := false
	var ch [8]byte
	for {
		start := r.pos
		n, err := io.ReadFull(r.src, ch[:])
		r.pos += int64(n)
		if err == io.EOF || err == io.ErrUnexpectedEOF {
			if !haveFmt {
				return r.formatErr(start, "fmt", "no fmt chunk before end of file")
			}
			return r.formatErr(start, "data", "no data chunk before end of file")
		}
		if err != nil {
			return r.ioErr(err)
		}
		id := string(ch[:4])
		csize := int64(binary.LittleEndian.Uint32(ch[4:]))
		switch id {
		case "fmt ":
			if haveFmt {
				r.warnf("second fmt chunk at offset %d ignored", start)
				break
			}
			if csize < 16 {
				return r.formatErr(start+4, "fmt.size", "fmt chunk of %d bytes, want at least 16", csize)
			}
			if csize > maxFmtSize {
				return r.formatErr(start+4, "fmt.size", "fmt chunk of %d bytes is implausibly large", csize)
			}
			body := make([]byte, csize)
			if err := r.readFull(body, "fmt"); err != nil {
				return err
			}
			if err := r.parseFmt(body, start+8); err != nil {
				return err
			}
			haveFmt = true
			if csize%2 == 1 {
				if err := r.skipChunk(id, 1, start+4); err != nil {
					return err
				}
			}
			continue
		case "data":
			if !haveFmt {
				return r.formatErr(start, "data", "data chunk before fmt chunk")
			}
			r.startData(start, csize, size)
			return nil
		}
		// Any other chunk (LIST, JUNK, bext, fact, ...) is skipped with its
		// pad byte.
		if size >= 0 && r.pos+csize > size {
			return r.formatErr(start+4, "chunk", "chunk %q of %d bytes runs past the end of the file (%d bytes)", id, csize, size)
		}
		if err := r.skipChunk(id, csize+csize%2, start+4); err != nil {
			return err
		}
	}
}

// parseFmt checks and decodes the fmt chunk body found at file offset off.
func (r *Reader) parseFmt(b []byte, off int64) error {
	le := binary.LittleEndian
	tag := le.Uint16(b[0:])
	channels := int(le.Uint16(b[2:]))
	rate := int64(le.Uint32(b[4:]))
	byteRate := int64(le.Uint32(b[8:]))
	align := int(le.Uint16(b[12:]))
	bits := int(le.Uint16(b[14:]))

	f := Format{SampleRate: int(rate), Channels: channels}
	code := tag
	if tag == 0xFFFE {
		f.Extensible = true
		if len(b) < 40 {
			return r.formatErr(off-4, "fmt.size", "extensible fmt chunk of %d bytes, want 40", len(b))
		}
		if cb := le.Uint16(b[16:]); cb < 22 {
			return r.formatErr(off+16, "fmt.cb_size", "extensible fmt with cbSize %d, want 22", cb)
		}
		var tail [14]byte
		copy(tail[:], b[26:40])
		code = le.Uint16(b[24:])
		if tail != guidTail {
			return r.unsupported(off+24, "fmt.sub_format", "unsupported SubFormat GUID %s", guidString(b[24:40]))
		}
	}
	fieldTag := "fmt.audio_format"
	tagOff := off
	if f.Extensible {
		fieldTag, tagOff = "fmt.sub_format", off+24
	}
	switch code {
	case 1:
	case 3:
		f.Float = true
	default:
		return r.unsupported(tagOff, fieldTag, "unsupported format tag %d (%s)", code, tagName(code))
	}

	if channels == 0 {
		return r.formatErr(off+2, "fmt.channels", "0 channels")
	}
	if rate == 0 {
		return r.formatErr(off+4, "fmt.sample_rate", "sample rate 0")
	}
	if bits == 0 {
		return r.formatErr(off+14, "fmt.bits_per_sample", "0 bits per sample")
	}
	// A PCM width that is not a whole number of bytes (e.g. 20) sits in the
	// next whole byte, left-justified, as in WAVEFORMATEX.
	container := (bits + 7) / 8 * 8
	valid := bits
	if f.Extensible {
		if bits%8 != 0 {
			return r.formatErr(off+14, "fmt.bits_per_sample", "extensible container of %d bits is not whole bytes", bits)
		}
		valid = int(le.Uint16(b[18:]))
		switch {
		case valid == 0:
			r.warnf("extensible fmt gives 0 valid bits; using the container width %d", bits)
			valid = bits
		case valid > bits:
			return r.formatErr(off+18, "fmt.valid_bits", "%d valid bits in a %d-bit container", valid, bits)
		}
	}
	switch {
	case f.Float && container == 32:
		r.kind = kindF32
	case f.Float && container == 64:
		r.kind = kindF64
	case f.Float:
		return r.unsupported(off+14, "fmt.bits_per_sample", "%d-bit float samples", bits)
	case container == 8:
		r.kind = kindU8
	case container == 16:
		r.kind = kindS16
	case container == 24:
		r.kind = kindS24
	case container == 32:
		r.kind = kindS32
	default:
		return r.unsupported(off+14, "fmt.bits_per_sample", "%d-bit PCM samples", bits)
	}
	if f.Float && valid != container {
		return r.formatErr(off+18, "fmt.valid_bits", "%d valid bits in a %d-bit float container", valid, container)
	}
	if want := channels * container / 8; align != want {
		return r.formatErr(off+12, "fmt.block_align", "block align %d, want %d for %d channels of %d bits", align, want, channels, container)
	}
	if want := rate * int64(align); byteRate != want {
		r.warnf("fmt byte rate %d disagrees with sample rate × block align = %d; ignored", byteRate, want)
	}
	f.BitDepth, f.ValidBits = container, valid
	r.format = f
	r.align = align
	r.mask = ^uint32(0) << uint(container-valid)
	return nil
}

func guidString(g []byte) string {
	le := binary.LittleEndian
	return fmt.Sprintf("{%08X-%04X-%04X-%X-%X}", le.Uint32(g[0:]), le.Uint16(g[4:]), le.Uint16(g[6:]), g[8:10], g[10:16])
}

// startData sets up the data chunk whose header is at file offset start.
func (r *Reader) startData(start, csize, size int64) {
	r.data = r.pos
	declared := csize
	switch {
	case size >= 0:
		r.sized = true
		avail := max(size-r.pos, 0)
		if csize == unknownSize {
			r.warnf("data size 0xFFFFFFFF (length unknown); using the %d bytes to the end of the file", avail)
			declared = avail
		} else if csize > avail {
			r.warnf("data size %d runs past the end of the file; clamped to %d bytes", csize, avail)
			declared = avail
		}
	case csize == unknownSize:
		r.warnf("data size 0xFFFFFFFF (length unknown); reading to the end of the stream")
		declared = -1
	}
	if declared >= 0 {
		if extra := declared % int64(r.align); extra != 0 {
			r.warnf("data size %d is not a whole number of %d-byte frames; last %d bytes ignored", declared, r.align, extra)
			declared -= extra
		}
		r.frames = declared / int64(r.align)
	}
	r.remain = declared
	r.buf = make([]byte, max(1, blockBytes/r.align)*r.align)
}

// fill reads up to max frames of raw bytes into r.buf and returns how many
// whole frames are there. It returns io.EOF, with n possibly > 0, once the
// data is exhausted; a truncated stream is clamped with a warning.
func (r *Reader) fill(maxFrames int) (int, error) {
	if r.eof {
		return 0, io.EOF
	}
	if r.have > 0 {
		copy(r.buf, r.buf[r.partOff:r.partOff+r.have])
	}
	nb := min(maxFrames, len(r.buf)/r.align) * r.align
	if r.remain >= 0 && int64(nb-r.have) > r.remain {
		nb = r.have + int(r.remain)
	}
	if nb <= r.have {
		r.eof = true
		return 0, io.EOF
	}
	n, err := io.ReadFull(r.src, r.buf[r.have:nb])
	r.pos += int64(n)
	if r.remain >= 0 {
		r.remain -= int64(n)
	}
	total := r.have + n
	frames := total / r.align
	r.have = 0
	switch {
	case err == nil:
		if r.remain == 0 {
			r.eof = true
		}
		return frames, nil
	case err == io.EOF || err == io.ErrUnexpectedEOF:
		r.eof = true
		got := r.read + int64(frames)
		if part := total % r.align; part != 0 {
			r.warnf("stream ends inside a frame at offset %d; %d bytes ignored", r.pos, part)
		}
		if r.remain > 0 || (r.frames >= 0 && got < r.frames) {
			r.warnf("data chunk ends early at offset %d; clamped to %d frames of %d", r.pos, got, r.frames)
		}
		r.frames = got
		return frames, io.EOF
	default:
		// Keep the incomplete frame so a retry continues where this stopped.
		r.have, r.partOff = total%r.align, frames*r.align
		return frames, r.ioErr(err)
	}
}

// ReadFrames decodes interleaved frames into dst (len(dst)/Channels of
// them) and returns the number of frames written. It fills dst unless the
// data ends, and returns (0, io.EOF) once nothing is left. It panics if dst
// is non-empty but shorter than one frame.
func (r *Reader) ReadFrames(dst []float64) (int, error) { return readFrames(r, dst) }

// ReadFrames32 is ReadFrames into float32; 32-bit PCM and 64-bit float are
// rounded to the nearest float32, narrower PCM is exact.
func (r *Reader) ReadFrames32(dst []float32) (int, error) { return readFrames(r, dst) }

func readFrames[T float32 | float64](r *Reader, dst []T) (int, error) {
	ch := r.format.Channels
	want := len(dst) / ch
	if len(dst) > 0 && want == 0 {
		panic("wavio: ReadFrames: dst shorter than one frame")
	}
	total := 0
	for total < want {
		n, err := r.fill(want - total)
		decode(dst[total*ch:(total+n)*ch], r.buf[:n*r.align], r.kind, r.mask)
		total += n
		r.read += int64(n)
		if err != nil {
			if errors.Is(err, io.EOF) && total > 0 {
				return total, nil
			}
			return total, err
		}
	}
	return total, nil
}

// Skip discards the next frames frames. It returns io.EOF if the data ended
// first; the reader is then at the end. It panics if frames < 0.
func (r *Reader) Skip(frames int64) error {
	if frames < 0 {
		panic("wavio: Skip: negative frame count")
	}
	for frames > 0 {
		n, err := r.fill(int(min(frames, int64(len(r.buf)/r.align))))
		frames -= int64(n)
		r.read += int64(n)
		if err != nil {
			return err
		}
	}
	return nil
}

// decode converts raw little-endian samples to [-1, 1) by the exact scales
// in the package doc. len(dst) samples are written.
func decode[T float32 | float64](dst []T, src []byte, k sampleKind, mask uint32) {
	le := binary.LittleEndian
	switch k {
	case kindU8:
		m := uint8(mask)
		src = src[:len(dst)]
		for i, u := range src {
			dst[i] = T(int32(u&m)-128) * (1.0 / 128)
		}
	case kindS16:
		m := uint64(uint16(mask)) * 0x0001_0001_0001_0001
		src = src[:2*len(dst)]
		// Four samples per 64-bit load; int16 → T and the power-of-two
		// scale are exact, so the order does not matter.
		i := 0
		for ; i+3 < len(dst); i += 4 {
			u := le.Uint64(src[2*i:]) & m
			d := dst[i : i+4 : i+4]
			d[0] = T(float64(int16(u))) * (1.0 / 32768)
			d[1] = T(float64(int16(u>>16))) * (1.0 / 32768)
			d[2] = T(float64(int16(u>>32))) * (1.0 / 32768)
			d[3] = T(float64(int16(u>>48))) * (1.0 / 32768)
		}
		for ; i < len(dst); i++ {
			u := uint64(le.Uint16(src[2*i:])) & m
			dst[i] = T(float64(int16(u))) * (1.0 / 32768)
		}
	case kindS24:
		src = src[:3*len(dst)]
		m := mask << 8
		for i := range dst {
			b := src[3*i : 3*i+3 : 3*i+3]
			u := uint32(b[0])<<8 | uint32(b[1])<<16 | uint32(b[2])<<24
			dst[i] = T(int32(u&m)>>8) * (1.0 / 8388608)
		}
	case kindS32:
		src = src[:4*len(dst)]
		for i := range dst {
			dst[i] = T(int32(le.Uint32(src[4*i:])&mask)) * (1.0 / 2147483648)
		}
	case kindF32:
		src = src[:4*len(dst)]
		for i := range dst {
			dst[i] = T(math.Float32frombits(le.Uint32(src[4*i:])))
		}
	case kindF64:
		src = src[:8*len(dst)]
		for i := range dst {
			dst[i] = T(math.Float64frombits(le.Uint64(src[8*i:])))
		}
	}
}
