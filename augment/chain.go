package augment

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"sync"

	"thrum/augment/room"
	"thrum/machine/wavio"
)

// ChainOptions apply one fixed chain of steps to every WAV file of a folder:
// speed, convolution with an impulse-response file (scaled to unit energy,
// causal, cut to the input length), a background at an SNR, and a gain. It is
// the tool for a one-off batch outside a plant (and for comparing throughput
// with general-purpose tools); it keeps no ledger.
type ChainOptions struct {
	In, Out string
	// Speed is the speed ratio (0 or 1: none).
	Speed float64
	// IR is an impulse-response WAV file ("" = none).
	IR string
	// Background is a background WAV file ("" = none), mixed at SNR dB
	// (mean square over the clip). File i of the sorted list takes the
	// background from (i mod OffsetCycle)·OffsetStep seconds on.
	Background  string
	SNR         float64
	OffsetStep  float64
	OffsetCycle int
	// GainDB is applied last.
	GainDB   float64
	Workers  int
	Encoding wavio.Encoding
}

// ChainFolder runs a ChainOptions batch and returns the number of files and
// of input frames processed.
func ChainFolder(ctx context.Context, o ChainOptions) (files int, frames int64, err error) {
	paths, err := filepath.Glob(filepath.Join(o.In, "*.wav"))
	if err != nil {
		return 0, 0, err
	}
	sort.Strings(paths)
	if len(paths) == 0 {
		return 0, 0, fmt.Errorf("augment: chain: no .wav files in %s", o.In)
	}
	if err := os.MkdirAll(o.Out, 0o755); err != nil {
		return 0, 0, err
	}
	var reverb *room.Reverb
	if o.IR != "" {
		a, err := wavio.ReadFile(o.IR)
		if err != nil {
			return 0, 0, err
		}
		rv := room.NewReverb(room.UnitEnergy(a.Mono(nil)), float64(a.Format.SampleRate))
		reverb = &rv
	}
	var bg []float64
	var bgRate int
	if o.Background != "" {
		a, err := wavio.ReadFile(o.Background)
		if err != nil {
			return 0, 0, err
		}
		bg, bgRate = a.Mono(nil), a.Format.SampleRate
	}
	enc := o.Encoding
	if enc == 0 {
		enc = wavio.PCM16
	}
	workers := o.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	plans := &Plans{}
	type result struct {
		frames int64
		err    error
	}
	idx := make(chan int)
	res := make(chan result)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var a, b []float64
			for i := range idx {
				n, err := func() (int64, error) {
					in, err := wavio.ReadFile(paths[i])
					if err != nil {
						return 0, err
					}
					fs := float64(in.Format.SampleRate)
					x := in.Mono(a)
					a = x
					if o.Speed != 0 && o.Speed != 1 {
						b = Speed{Ratio: o.Speed, Plans: plans}.Apply(b[:0], x, fs)
						a, b = b, a
						x = a
					}
					if reverb != nil {
						b = reverb.Apply(b[:0], x, fs)
						a, b = b, a
						x = a
					}
					if bg != nil {
						if bgRate != in.Format.SampleRate {
							return 0, fmt.Errorf("background rate %d Hz differs from %d Hz", bgRate, in.Format.SampleRate)
						}
						off := 0
						if o.OffsetCycle > 0 {
							off = int(float64(i%o.OffsetCycle) * o.OffsetStep * fs)
						}
						b = Background{Source: bg, SNR: o.SNR, Offset: off}.Apply(b[:0], x, fs)
						a, b = b, a
						x = a
					}
					if o.GainDB != 0 {
						Gain{DB: o.GainDB}.Apply(x, x, fs)
					}
					out := filepath.Join(o.Out, filepath.Base(paths[i]))
					return int64(in.Frames), wavio.WriteFile(out, x, in.Format.SampleRate, 1, enc)
				}()
				if err != nil {
					err = fmt.Errorf("augment: chain: %s: %w", paths[i], err)
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
