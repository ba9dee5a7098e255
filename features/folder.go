package features

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"unsafe"

	"thrum/machine"
	"thrum/machine/pool"
	"thrum/machine/wavio"
)

// FolderLogMel computes the log-mel features of every .wav file of a folder
// and writes one float32 .npy (frames × bands) per file into out, with the
// same base name. It is the plain batch tool (no plant, no ledger); it
// returns the number of files and of frames written. A file that cannot be
// read completely gets no .npy and does not stop the others: every such
// file is named in a *pool.Failed error returned with the counts. When ctx
// is done it stops within one file per worker and returns ctx's error.
func FolderLogMel(ctx context.Context, in, out string, cfg Config, workers int) (files, frames int, err error) {
	paths, err := filepath.Glob(filepath.Join(in, "*.wav"))
	if err != nil {
		return 0, 0, err
	}
	sort.Strings(paths)
	if len(paths) == 0 {
		return 0, 0, fmt.Errorf("features: no .wav files in %s", in)
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		return 0, 0, err
	}
	type folderWorker struct {
		lm   *LogMel
		rate int
		x    []float64
		feat []float32
		buf  []byte
	}
	ws := make([]folderWorker, pool.Size(workers))
	// One bad file does not stop the others: its error is kept, and its
	// .npy is not written (nor one left from an earlier run); a written
	// file counts its frames.
	batch := pool.NewBatch(len(paths))
	err = pool.Each(ctx, len(paths), workers, func(ctx context.Context, w, i int) error {
		fw := &ws[w]
		name := strings.TrimSuffix(filepath.Base(paths[i]), filepath.Ext(paths[i])) + ".npy"
		dst := filepath.Join(out, name)
		n, err := func() (int, error) {
			if err := machine.CheckRegular(paths[i]); err != nil {
				return 0, err
			}
			f, err := wavio.Open(paths[i])
			if err != nil {
				return 0, err
			}
			defer f.Close()
			fm := f.Format()
			if fw.lm == nil || fw.rate != fm.SampleRate {
				if fw.lm, err = NewLogMel(cfg, float64(fm.SampleRate)); err != nil {
					return 0, err
				}
				fw.rate = fm.SampleRate
			}
			fw.x, err = readMono(f, fw.x)
			if err != nil {
				return 0, err
			}
			var nf int
			fw.feat, nf = fw.lm.Compute(fw.feat, fw.x)
			fw.buf, err = writeNPYFast(dst, fw.buf, fw.feat, nf, fw.lm.Bands())
			return nf, err
		}()
		if err != nil {
			if rerr := os.Remove(dst); rerr != nil && !errors.Is(rerr, fs.ErrNotExist) {
				err = fmt.Errorf("%w (and an earlier %s could not be removed: %v)", err, name, rerr)
			}
			batch.Fail(i, fmt.Errorf("features: %s: %w", paths[i], err))
			return nil
		}
		batch.Done(i, int64(n))
		return nil
	})
	files, total, err := batch.Result(err)
	return files, int(total), err
}

// readMono reads a whole file as mono samples, reusing dst.
func readMono(f *wavio.File, dst []float64) ([]float64, error) {
	ch := f.Format().Channels
	n := f.Frames()
	if n < 0 {
		n = 0
	}
	inter := dst[:0]
	if ch == 1 && cap(dst) >= int(n) {
		inter = dst[:n]
	} else {
		inter = make([]float64, int(n)*ch)
	}
	got := 0
	for got < int(n) {
		k, err := f.ReadFrames(inter[got*ch:])
		got += k
		if err == io.EOF && got == int(n) {
			break
		}
		if err == io.EOF {
			return nil, fmt.Errorf("data ends at frame %d of %d", got, n)
		}
		if err != nil {
			return nil, err
		}
	}
	inter = inter[:got*ch]
	if ch == 1 {
		return inter, nil
	}
	mono := make([]float64, got)
	for i := range mono {
		var s float64
		for c := 0; c < ch; c++ {
			s += inter[i*ch+c]
		}
		mono[i] = s / float64(ch)
	}
	return mono, nil
}

// littleEndian reports whether float32 values are stored little-endian in
// memory, the byte order of the .npy files written here.
var littleEndian = binary.NativeEndian.Uint16([]byte{1, 0}) == 1

// writeNPYFast writes one .npy file (temporary name, then rename) from a
// reused byte buffer: the header and the little-endian data in one write.
func writeNPYFast(path string, buf []byte, data []float32, frames, bands int) ([]byte, error) {
	h, err := npyHeader([]int{frames, bands}, 0)
	if err != nil {
		return buf, err
	}
	data = data[:frames*bands]
	need := len(h) + 4*len(data)
	if cap(buf) < need {
		buf = make([]byte, need)
	}
	buf = buf[:need]
	copy(buf, h)
	b := buf[len(h):]
	b = b[:4*len(data)]
	if littleEndian && len(data) > 0 {
		copy(b, unsafe.Slice((*byte)(unsafe.Pointer(&data[0])), 4*len(data)))
	} else {
		for i, v := range data {
			binary.LittleEndian.PutUint32(b[4*i:], math.Float32bits(v))
		}
	}
	tmp := path + ".tmp"
	f, err := os.Create(tmp)
	if err != nil {
		return buf, err
	}
	_, err = f.Write(buf)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
	}
	return buf, err
}
