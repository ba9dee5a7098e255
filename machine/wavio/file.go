package wavio

import (
	"fmt"
	"io"
	"os"
)

// File is a Reader on an open file.
type File struct {
	*Reader
	f *os.File
}

// Open opens the WAV file at path and parses its header. The path is the
// name used in errors and warnings.
func Open(path string) (*File, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("wavio: %w", err)
	}
	st, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, fmt.Errorf("wavio: %w", err)
	}
	size := int64(-1)
	if st.Mode().IsRegular() {
		size = st.Size()
	}
	r, err := NewReader(f, path, size)
	if err != nil {
		f.Close()
		return nil, err
	}
	return &File{Reader: r, f: f}, nil
}

// Close closes the file.
func (f *File) Close() error { return f.f.Close() }

// Audio is a whole decoded recording.
type Audio struct {
	Format   Format
	Frames   int
	Data     []float64 // interleaved, Frames×Channels samples
	Warnings []string
}

// ReadFile decodes the whole WAV file at path.
func ReadFile(path string) (*Audio, error) {
	f, err := Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	a, err := readAll(f.Reader)
	if err != nil {
		return nil, err
	}
	return a, nil
}

// readAll decodes what is left of r. When the length is known the samples
// go straight into one slice of the right size.
func readAll(r *Reader) (*Audio, error) {
	ch := r.format.Channels
	// Trust the frame count for one allocation only when it was checked
	// against the stream size; otherwise a hostile header could ask for
	// gigabytes, so grow from one block.
	var data []float64
	if n := r.Frames(); n >= 0 && r.sized {
		data = make([]float64, n*int64(ch))
	} else {
		data = make([]float64, len(r.buf)/r.align*ch)
	}
	total := 0
	for {
		if total*ch == len(data) {
			if r.Frames() >= 0 && int64(total) >= r.Frames() {
				break
			}
			data = append(data, make([]float64, max(len(data), len(r.buf)/r.align*ch))...)
		}
		n, err := r.ReadFrames(data[total*ch:])
		total += n
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
	}
	return &Audio{Format: r.format, Frames: total, Data: data[: total*ch : total*ch], Warnings: r.Warnings()}, nil
}

// Mono returns the per-frame mean of the channels in dst (reused when its
// capacity is at least Frames, allocated otherwise).
func (a *Audio) Mono(dst []float64) []float64 {
	if cap(dst) >= a.Frames {
		dst = dst[:a.Frames]
	} else {
		dst = make([]float64, a.Frames)
	}
	ch := a.Format.Channels
	if ch == 1 {
		copy(dst, a.Data[:a.Frames])
		return dst
	}
	n := float64(ch)
	for i := range dst {
		s := 0.0
		for _, v := range a.Data[i*ch : (i+1)*ch] {
			s += v
		}
		dst[i] = s / n
	}
	return dst
}

// SeekFrame moves the read position to frame k of the data chunk, so that
// the next ReadFrames starts there. It needs a data chunk of known length
// (a regular file) and 0 ≤ k ≤ its frames; after a read error that left an
// incomplete frame it refuses too.
func (f *File) SeekFrame(k int64) error {
	r := f.Reader
	if r.format.Codec != "" {
		return fmt.Errorf("wavio: %s: cannot seek in a %s stream (its frames have no fixed offset); read forward with Skip", r.name, r.format.Codec)
	}
	al := int64(r.align)
	total := r.read + r.remain/al // frames in the data chunk as declared (clamped to the file)
	if r.frames >= 0 {
		total = min(total, r.frames)
	}
	if k < 0 || r.remain < 0 || r.have > 0 || k > total {
		return fmt.Errorf("wavio: %s: cannot seek to frame %d of %d", r.name, k, total)
	}
	off := r.data + k*al
	if _, err := f.f.Seek(off, io.SeekStart); err != nil {
		return fmt.Errorf("wavio: %s: %w", r.name, err)
	}
	r.src.Reset(f.f)
	r.remain += (r.read - k) * al
	r.read, r.pos, r.eof = k, off, false
	return nil
}
