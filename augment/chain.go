package augment

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"sync"

	"thrum/augment/room"
	"thrum/machine"
	"thrum/machine/pool"
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
// of input frames processed. A file that cannot be read or processed does
// not stop the others: they are all reported, by name, in a *pool.Failed
// error returned with the counts of the files written. When ctx is done it
// stops within one file per worker and returns ctx's error.
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
	plans := &Plans{}
	pc := &powerCache{m: make(map[[2]int]float64)}
	// One failed file does not stop the others: its error is kept and
	// reported with the rest at the end; a written file counts its input
	// frames.
	batch := pool.NewBatch(len(paths))
	ws := make([]chainWorker, pool.Size(o.Workers))
	err = pool.Each(ctx, len(paths), o.Workers, func(ctx context.Context, w, i int) error {
		cw := &ws[w]
		if err := machine.CheckRegular(paths[i]); err != nil {
			batch.Fail(i, fmt.Errorf("augment: chain: %s: %w", paths[i], err))
			return nil
		}
		y, rate, n, err := cw.st.run(&o, i, paths[i], plans, reverb, bg, bgRate, pc, cw.spare)
		if err != nil {
			cw.spare = y
			batch.Fail(i, fmt.Errorf("augment: chain: %s: %w", paths[i], err))
			return nil
		}
		// The worker computes its next clip while this one is written:
		// two buffers alternate between the computation and the write.
		cw.spare = cw.wait()
		out := filepath.Join(o.Out, filepath.Base(paths[i]))
		fin := make(chan struct{})
		cw.inflight, cw.buf = fin, y
		go func() {
			defer close(fin)
			if err := wavio.WriteFile(out, y, rate, 1, enc); err != nil {
				batch.Fail(i, fmt.Errorf("augment: chain: %s: %w", paths[i], err))
				return
			}
			batch.Done(i, n)
		}()
		return nil
	})
	for w := range ws {
		ws[w].wait()
	}
	return batch.Result(err)
}

// chainWorker is one pool worker's state: its buffers and the write it
// has in flight.
type chainWorker struct {
	st       chainState
	spare    []float64
	buf      []float64
	inflight chan struct{}
}

// wait waits for the worker's write in flight, if any, and returns its
// buffer, free again (nil when no write was in flight).
func (cw *chainWorker) wait() []float64 {
	if cw.inflight == nil {
		return nil
	}
	<-cw.inflight
	cw.inflight = nil
	b := cw.buf
	cw.buf = nil
	return b
}

// chainState is one worker's reusable buffers: the decoded clip and two
// ping-pong signal buffers, so that a warm worker allocates little per
// clip.
type chainState struct {
	in, a, b []float64
}

// run processes file i of the batch into out (grown as needed) and returns
// it with the sample rate and the number of input frames. The steps are
// those of Speed, Reverb, Background and Gain in turn, with the same
// arithmetic, but the background mix and the gain share one pass and the
// background is read in place when it needs no loop.
func (st *chainState) run(o *ChainOptions, i int, path string, plans *Plans, reverb *room.Reverb, bg []float64, bgRate int, pc *powerCache, out []float64) ([]float64, int, int64, error) {
	x, format, err := st.read(path)
	if err != nil {
		return out, 0, 0, err
	}
	frames := int64(len(x))
	fs := float64(format.SampleRate)
	if o.Speed != 0 && o.Speed != 1 {
		st.a = Speed{Ratio: o.Speed, Plans: plans}.Apply(st.a[:0], x, fs)
		x = st.a
	}
	if reverb != nil {
		// x is st.in or st.a here, never st.b.
		st.b = reverb.Apply(st.b[:0], x, fs)
		x = st.b
	}
	k := 1.0
	if o.GainDB != 0 {
		k = math.Pow(10, o.GainDB/20)
	}
	y := grow(out, len(x))
	if bg == nil {
		copy(y, x)
		scale(y, k)
		return y, format.SampleRate, frames, nil
	}
	if bgRate != format.SampleRate {
		return y, 0, 0, fmt.Errorf("background rate %d Hz differs from %d Hz", bgRate, format.SampleRate)
	}
	off := 0
	if o.OffsetCycle > 0 {
		off = int(float64(i%o.OffsetCycle) * o.OffsetStep * fs)
	}
	var noise []float64
	inPlace := off >= 0 && off+len(x) <= len(bg)
	if inPlace {
		noise = bg[off : off+len(x)]
	} else {
		noise = Background{Source: bg, Offset: off}.Loop(y, fs)
	}
	// As Mix, then Gain: y = k·(x + g·noise); a silent clip or background
	// leaves x unmixed, as Background.Apply does.
	ps := Power(x, fs, WeightNone)
	var pn float64
	if inPlace {
		pn = pc.power(bg, off, len(x), fs)
	} else {
		pn = Power(noise, fs, WeightNone)
	}
	if ps == 0 || pn == 0 || math.IsNaN(ps) || math.IsNaN(pn) || math.IsNaN(o.SNR) || math.IsInf(o.SNR, 0) {
		copy(y, x)
		scale(y, k)
	} else {
		mixScaled(y, x, noise, NoiseGain(ps, pn, o.SNR), k)
	}
	return y, format.SampleRate, frames, nil
}

// read decodes path into st.in (mono: the per-frame mean of the channels,
// as Audio.Mono) and returns the samples and the format.
func (st *chainState) read(path string) ([]float64, wavio.Format, error) {
	f, err := wavio.Open(path)
	if err != nil {
		return nil, wavio.Format{}, err
	}
	defer f.Close()
	format := f.Format()
	ch := format.Channels
	// Grow from what the last clip needed, one block at a time, so a
	// hostile frame count in a header cannot force a large allocation.
	buf := st.in[:cap(st.in)]
	const block = 1 << 14
	total := 0
	for {
		if len(buf)-total*ch < block*ch {
			buf = append(buf[:total*ch], make([]float64, block*ch)...)
			buf = buf[:cap(buf)]
		}
		n, err := f.ReadFrames(buf[total*ch:])
		total += n
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, format, err
		}
	}
	st.in = buf
	data := buf[:total*ch]
	if ch == 1 {
		return data, format, nil
	}
	nf := float64(ch)
	for j := 0; j < total; j++ {
		s := 0.0
		for _, v := range data[j*ch : (j+1)*ch] {
			s += v
		}
		buf[j] = s / nf
	}
	return buf[:total], format, nil
}

// mixScaled sets y[i] = k·(x[i] + g·n[i]). y may alias x or n.
func mixScaled(y, x, n []float64, g, k float64) {
	x, n = x[:len(y)], n[:len(y)]
	for i := range y {
		y[i] = k * (x[i] + g*n[i])
	}
}

func scale(y []float64, k float64) {
	if k == 1 {
		return
	}
	for i := range y {
		y[i] *= k
	}
}

// powerCache holds the mean square of background segments by (offset,
// length): clips of one length at one offset share it, so it is computed
// once per pair. It is safe for concurrent use.
type powerCache struct {
	mu sync.Mutex
	m  map[[2]int]float64
}

// power returns Power(bg[off:off+n], fs, WeightNone).
func (c *powerCache) power(bg []float64, off, n int, fs float64) float64 {
	k := [2]int{off, n}
	c.mu.Lock()
	p, ok := c.m[k]
	c.mu.Unlock()
	if ok {
		return p
	}
	p = Power(bg[off:off+n], fs, WeightNone)
	c.mu.Lock()
	if len(c.m) < 1<<12 {
		c.m[k] = p
	}
	c.mu.Unlock()
	return p
}
