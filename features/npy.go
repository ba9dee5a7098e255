package features

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"thrum/machine"
)

// npyAlign is the alignment of the data block; numpy itself pads to 64.
const npyAlign = 64

// npyHeader returns the complete .npy v1.0 preamble (magic, version, header
// length, dict padded with spaces and '\n') for a little-endian float32
// C-order array of the given shape. minLen, when larger than the natural
// length, reserves room so that a later header of another shape fits.
func npyHeader(shape []int, minLen int) ([]byte, error) {
	var sb strings.Builder
	sb.WriteString("{'descr': '<f4', 'fortran_order': False, 'shape': (")
	for i, d := range shape {
		if d < 0 {
			return nil, fmt.Errorf("features: npy: negative dimension %d", d)
		}
		if i > 0 {
			sb.WriteString(", ")
		}
		sb.WriteString(strconv.Itoa(d))
	}
	if len(shape) == 1 {
		sb.WriteByte(',')
	}
	sb.WriteString("), }")
	dict := sb.String()
	total := 10 + len(dict) + 1 // magic 6, version 2, length 2, dict, '\n'
	if total < minLen {
		total = minLen
	}
	total = (total + npyAlign - 1) / npyAlign * npyAlign
	hlen := total - 10
	if hlen > math.MaxUint16 {
		return nil, fmt.Errorf("features: npy: header of %d bytes too long for format 1.0", hlen)
	}
	b := make([]byte, 0, total)
	b = append(b, "\x93NUMPY\x01\x00"...)
	b = binary.LittleEndian.AppendUint16(b, uint16(hlen))
	b = append(b, dict...)
	for len(b) < total-1 {
		b = append(b, ' ')
	}
	return append(b, '\n'), nil
}

func shapeCount(shape []int) (int, error) {
	n := 1
	for _, d := range shape {
		if d < 0 {
			return 0, fmt.Errorf("features: npy: negative dimension %d", d)
		}
		n *= d
	}
	return n, nil
}

// WriteNPY writes data as a .npy file (format 1.0, '<f4', C order) of the
// given shape to w. The data block starts at a multiple of 64 bytes. No
// shape means a 1-D array of len(data).
func WriteNPY(w io.Writer, data []float32, shape ...int) error {
	if len(shape) == 0 {
		shape = []int{len(data)}
	}
	n, err := shapeCount(shape)
	if err != nil {
		return err
	}
	if n != len(data) {
		return fmt.Errorf("features: npy: shape %v holds %d values, data has %d", shape, n, len(data))
	}
	h, err := npyHeader(shape, 0)
	if err != nil {
		return err
	}
	if _, err := w.Write(h); err != nil {
		return fmt.Errorf("features: npy: %w", err)
	}
	return writeF32(w, data, nil)
}

// writeF32 writes data little-endian through a chunk buffer.
func writeF32(w io.Writer, data []float32, buf []byte) error {
	const chunk = 16 << 10
	if cap(buf) < 4*chunk {
		buf = make([]byte, 0, 4*chunk)
	}
	for len(data) > 0 {
		m := min(len(data), chunk)
		b := buf[:0]
		for _, v := range data[:m] {
			b = binary.LittleEndian.AppendUint32(b, math.Float32bits(v))
		}
		if _, err := w.Write(b); err != nil {
			return fmt.Errorf("features: npy: %w", err)
		}
		data = data[m:]
	}
	return nil
}

// WriteNPYFile writes a .npy file at path atomically (temporary name in the
// same folder, then rename).
func WriteNPYFile(path string, data []float32, shape ...int) error {
	f, err := machine.CreateAtomic(path)
	if err != nil {
		return err
	}
	bw := bufio.NewWriterSize(f, 64<<10)
	if err := WriteNPY(bw, data, shape...); err != nil {
		f.Abort()
		return err
	}
	if err := bw.Flush(); err != nil {
		f.Abort()
		return fmt.Errorf("features: npy: %w", err)
	}
	return f.Commit()
}

// StackWriter streams rows of several clips into one 2-D .npy array of
// shape (rows, cols). When the row count is known up front the header is
// final from the start and any io.Writer works; otherwise (rows < 0) header
// space is reserved and patched on Close, which needs an io.WriteSeeker.
type StackWriter struct {
	w       io.Writer
	cols    int
	want    int64 // declared rows, −1 when unknown
	rows    int64
	hdrLen  int
	buf     []byte
	err     error
	closed  bool
	partial int // values of an unfinished row already written
}

// maxRows is the widest row count a reserved header must hold.
const maxRows = math.MaxInt

// NewStackWriter starts a stacked array of cols columns on w. rows ≥ 0
// fixes the row count (Close fails if a different number was written);
// rows < 0 defers it to Close, and w must then be an io.WriteSeeker
// positioned at the start of the file.
func NewStackWriter(w io.Writer, cols int, rows int64) (*StackWriter, error) {
	if cols < 1 {
		return nil, fmt.Errorf("features: npy: %d columns", cols)
	}
	s := &StackWriter{w: w, cols: cols, want: rows}
	var h []byte
	var err error
	if rows >= 0 {
		h, err = npyHeader([]int{int(rows), cols}, 0)
	} else {
		if _, ok := w.(io.WriteSeeker); !ok {
			return nil, errors.New("features: npy: an unknown row count needs an io.WriteSeeker")
		}
		h, err = npyHeader([]int{maxRows, cols}, 0)
	}
	if err != nil {
		return nil, err
	}
	s.hdrLen = len(h)
	if _, err := w.Write(h); err != nil {
		return nil, fmt.Errorf("features: npy: %w", err)
	}
	return s, nil
}

// Rows returns the number of complete rows written so far.
func (s *StackWriter) Rows() int64 { return s.rows }

// Write appends values in row-major order; len(data) need not be a whole
// number of rows, but the total must be by Close.
func (s *StackWriter) Write(data []float32) error {
	if s.err != nil {
		return s.err
	}
	if s.closed {
		return errors.New("features: npy: write after close")
	}
	total := int64(s.partial) + int64(len(data))
	newRows := total / int64(s.cols)
	if s.want >= 0 && s.rows+newRows > s.want {
		s.err = fmt.Errorf("features: npy: more than the declared %d rows", s.want)
		return s.err
	}
	if s.buf == nil {
		s.buf = make([]byte, 0, 64<<10)
	}
	if err := writeF32(s.w, data, s.buf); err != nil {
		s.err = err
		return err
	}
	s.rows += newRows
	s.partial = int(total % int64(s.cols))
	return nil
}

// Close finishes the array: it checks the row count and, when it was not
// known, rewrites the header in place. It does not close the underlying
// writer.
func (s *StackWriter) Close() error {
	if s.err != nil {
		return s.err
	}
	if s.closed {
		return nil
	}
	s.closed = true
	if s.partial != 0 {
		return fmt.Errorf("features: npy: %d values left over, not a whole row of %d", s.partial, s.cols)
	}
	if s.want >= 0 {
		if s.rows != s.want {
			return fmt.Errorf("features: npy: wrote %d rows, declared %d", s.rows, s.want)
		}
		return nil
	}
	if s.rows > maxRows {
		return fmt.Errorf("features: npy: %d rows", s.rows)
	}
	h, err := npyHeader([]int{int(s.rows), s.cols}, s.hdrLen)
	if err != nil {
		return err
	}
	if len(h) != s.hdrLen {
		return fmt.Errorf("features: npy: header grew from %d to %d bytes", s.hdrLen, len(h))
	}
	ws := s.w.(io.WriteSeeker)
	end, err := ws.Seek(0, io.SeekCurrent)
	if err == nil {
		_, err = ws.Seek(0, io.SeekStart)
	}
	if err == nil {
		_, err = ws.Write(h)
	}
	if err == nil {
		_, err = ws.Seek(end, io.SeekStart)
	}
	if err != nil {
		return fmt.Errorf("features: npy: patching header: %w", err)
	}
	return nil
}

// StackFile is a StackWriter on a file that appears at its path only when
// Close succeeds (temporary name, then rename).
type StackFile struct {
	*StackWriter
	f  *machine.AtomicFile
	bw *bufio.Writer
}

// CreateStackFile starts a stacked .npy at path with cols columns and an
// unknown row count.
func CreateStackFile(path string, cols int) (*StackFile, error) {
	f, err := machine.CreateAtomic(path)
	if err != nil {
		return nil, err
	}
	sf := &StackFile{f: f}
	sf.bw = bufio.NewWriterSize(f, 64<<10)
	sw, err := NewStackWriter(&seekFlusher{sf.bw, f}, cols, -1)
	if err != nil {
		f.Abort()
		return nil, err
	}
	sf.StackWriter = sw
	return sf, nil
}

// Close finishes the array and renames the file into place; on any error
// the temporary file is removed.
func (sf *StackFile) Close() error {
	err := sf.StackWriter.Close()
	if err == nil {
		err = sf.bw.Flush()
	}
	if err != nil {
		sf.f.Abort()
		return err
	}
	return sf.f.Commit()
}

// Abort discards the file.
func (sf *StackFile) Abort() { sf.f.Abort() }

// seekFlusher lets a buffered file be seeked: it flushes before seeking.
type seekFlusher struct {
	bw *bufio.Writer
	f  *machine.AtomicFile
}

func (s *seekFlusher) Write(p []byte) (int, error) { return s.bw.Write(p) }

func (s *seekFlusher) Seek(off int64, whence int) (int64, error) {
	if err := s.bw.Flush(); err != nil {
		return 0, err
	}
	return s.f.Seek(off, whence)
}

// ReadNPY decodes a little-endian float32 C-order .npy file (format 1.0 or
// 2.0, as WriteNPY and numpy write it) and returns its values and shape.
// name is used in errors only.
func ReadNPY(b []byte, name string) ([]float32, []int, error) {
	bad := func(format string, a ...any) ([]float32, []int, error) {
		return nil, nil, fmt.Errorf("features: %s: %s", name, fmt.Sprintf(format, a...))
	}
	if len(b) < 10 || string(b[:6]) != "\x93NUMPY" {
		return bad("not a .npy file (no magic at byte 0)")
	}
	var hlen, start int
	switch b[6] {
	case 1:
		hlen, start = int(binary.LittleEndian.Uint16(b[8:10])), 10
	case 2, 3:
		if len(b) < 12 {
			return bad("header cut short at byte %d", len(b))
		}
		hlen, start = int(binary.LittleEndian.Uint32(b[8:12])), 12
	default:
		return bad("unsupported .npy version %d.%d at byte 6", b[6], b[7])
	}
	if start+hlen > len(b) {
		return bad("header of %d bytes runs past the end (%d bytes)", hlen, len(b))
	}
	dict := string(b[start : start+hlen])
	if !strings.Contains(dict, "'descr': '<f4'") {
		return bad("dtype is not little-endian float32 ('<f4') in header %q", strings.TrimSpace(dict))
	}
	if !strings.Contains(dict, "'fortran_order': False") {
		return bad("Fortran order is not supported (header %q)", strings.TrimSpace(dict))
	}
	i := strings.Index(dict, "'shape': (")
	if i < 0 {
		return bad("no shape in header %q", strings.TrimSpace(dict))
	}
	rest := dict[i+len("'shape': ("):]
	j := strings.IndexByte(rest, ')')
	if j < 0 {
		return bad("shape not closed in header %q", strings.TrimSpace(dict))
	}
	var shape []int
	n := 1
	for _, f := range strings.Split(rest[:j], ",") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		d, err := strconv.Atoi(f)
		if err != nil || d < 0 {
			return bad("shape dimension %q in header %q", f, strings.TrimSpace(dict))
		}
		shape = append(shape, d)
		if d > 0 && n > math.MaxInt32/d {
			return bad("shape %v too large", shape)
		}
		n *= d
	}
	data := b[start+hlen:]
	if len(data) != 4*n {
		return bad("shape %v needs %d bytes of data, the file has %d after byte %d", shape, 4*n, len(data), start+hlen)
	}
	out := make([]float32, n)
	for k := range out {
		out[k] = math.Float32frombits(binary.LittleEndian.Uint32(data[4*k:]))
	}
	return out, shape, nil
}
