package wavio

import (
	"bufio"
	"errors"
	"fmt"
	"io"

	"github.com/mewkiz/flac"
	"github.com/mewkiz/flac/frame"
)

// FLAC input. A FLAC stream is decoded frame by frame into the same
// little-endian PCM layout a WAV data chunk has (samples left-justified in
// 8-, 16-, 24- or 32-bit containers, 8-bit unsigned), so the Reader's
// block decoding, scaling and Skip serve both formats unchanged.

// flacMagic starts every FLAC stream (FLAC format specification, "stream").
const flacMagic = "fLaC"

// Codec names for Format.Codec.
const CodecFLAC = "flac"

// openFLAC sets r up to read the FLAC stream in r.src.
func (r *Reader) openFLAC() error {
	s, err := flac.New(r.src)
	if err != nil {
		return r.formatErr(0, "flac.streaminfo", "%v", err)
	}
	info := s.Info
	bits := int(info.BitsPerSample)
	ch := int(info.NChannels)
	if ch < 1 || bits < 4 || bits > 32 || info.SampleRate == 0 {
		return r.formatErr(0, "flac.streaminfo", "%d channels, %d bits per sample, %d Hz", ch, bits, info.SampleRate)
	}
	container := (bits + 7) / 8 * 8
	r.format = Format{SampleRate: int(info.SampleRate), Channels: ch, BitDepth: container, ValidBits: bits, Codec: CodecFLAC}
	switch container {
	case 8:
		r.kind = kindU8
	case 16:
		r.kind = kindS16
	case 24:
		r.kind = kindS24
	default:
		r.kind = kindS32
	}
	r.align = ch * container / 8
	r.mask = ^uint32(0)
	r.data = -1
	// The sample count of STREAMINFO (0 = unknown) is checked against the
	// decoded frames as they come; a short stream is clamped with a warning.
	if info.NSamples > 0 {
		r.frames = int64(info.NSamples)
		r.remain = r.frames * int64(r.align)
	}
	pcm := &flacPCM{r: r, s: s, bits: bits, container: container}
	r.src = bufio.NewReaderSize(pcm, blockBytes)
	r.buf = make([]byte, max(1, blockBytes/r.align)*r.align)
	return nil
}

// flacPCM is an io.Reader of the decoded stream as interleaved PCM bytes.
type flacPCM struct {
	r               *Reader
	s               *flac.Stream
	bits, container int
	out             []byte // decoded bytes not yet returned
	err             error
}

func (p *flacPCM) Read(b []byte) (int, error) {
	for len(p.out) == 0 {
		if p.err != nil {
			return 0, p.err
		}
		f, err := p.s.ParseNext()
		if err != nil {
			if errors.Is(err, io.EOF) {
				p.err = io.EOF
			} else {
				p.err = fmt.Errorf("wavio: %s: flac frame: %w", p.r.name, err)
			}
			continue
		}
		if err := p.frame(f); err != nil {
			p.err = err
		}
	}
	n := copy(b, p.out)
	p.out = p.out[n:]
	return n, nil
}

// frame appends frame f's samples, interleaved, to p.out.
func (p *flacPCM) frame(f *frame.Frame) error {
	ch := p.r.format.Channels
	if len(f.Subframes) != ch {
		return fmt.Errorf("wavio: %s: flac frame at sample %d has %d channels, the stream %d", p.r.name, f.SampleNumber(), len(f.Subframes), ch)
	}
	n := int(f.BlockSize)
	for _, sf := range f.Subframes {
		if len(sf.Samples) < n {
			return fmt.Errorf("wavio: %s: flac frame at sample %d: subframe of %d samples, block size %d", p.r.name, f.SampleNumber(), len(sf.Samples), n)
		}
	}
	w := p.container / 8
	need := n * ch * w
	if cap(p.out) < need {
		p.out = make([]byte, need)
	}
	out := p.out[:need]
	shift := uint(p.container - p.bits)
	k := 0
	for i := 0; i < n; i++ {
		for c := 0; c < ch; c++ {
			v := uint32(f.Subframes[c].Samples[i]) << shift
			switch w {
			case 1:
				out[k] = byte(v) + 128
			case 2:
				out[k], out[k+1] = byte(v), byte(v>>8)
			case 3:
				out[k], out[k+1], out[k+2] = byte(v), byte(v>>8), byte(v>>16)
			default:
				out[k], out[k+1], out[k+2], out[k+3] = byte(v), byte(v>>8), byte(v>>16), byte(v>>24)
			}
			k += w
		}
	}
	p.out = out
	return nil
}
