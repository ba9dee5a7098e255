package features

import (
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"sync"
	"unsafe"

	"thrum/machine/wavio"
)

// FolderLogMel computes the log-mel features of every .wav file of a folder
// and writes one float32 .npy (frames × bands) per file into out, with the
// same base name. It is the plain batch tool (no plant, no ledger); it
// returns the number of files and of frames written.
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
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	type result struct {
		frames int
		err    error
	}
	idx := make(chan int)
	res := make(chan result)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var lm *LogMel
			var rate int
			var x []float64
			var feat []float32
			var buf []byte
			for i := range idx {
				n, err := func() (int, error) {
					f, err := wavio.Open(paths[i])
					if err != nil {
						return 0, err
					}
					defer f.Close()
					fm := f.Format()
					if lm == nil || rate != fm.SampleRate {
						if lm, err = NewLogMel(cfg, float64(fm.SampleRate)); err != nil {
							return 0, err
						}
						rate = fm.SampleRate
					}
					x, err = readMono(f, x)
					if err != nil {
						return 0, err
					}
					var nf int
					feat, nf = lm.Compute(feat, x)
					name := strings.TrimSuffix(filepath.Base(paths[i]), filepath.Ext(paths[i])) + ".npy"
					buf, err = writeNPYFast(filepath.Join(out, name), buf, feat, nf, lm.Bands())
					return nf, err
				}()
				if err != nil {
					err = fmt.Errorf("features: %s: %w", paths[i], err)
				}
				res <- result{n, err}
			}
		}()
	}
	go func() {
		defer close(idx)
		for i := range paths {
			select {
			case idx <- i:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(res) }()
	var errs []string
	for r := range res {
		if r.err != nil {
			errs = append(errs, r.err.Error())
			continue
		}
		files++
		frames += r.frames
	}
	if len(errs) > 0 {
		return files, frames, fmt.Errorf("%d file(s) failed:\n  %s", len(errs), strings.Join(errs, "\n  "))
	}
	return files, frames, ctx.Err()
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
		if err != nil {
			break
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
