package machine

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sync"

	"thrum/machine/dsp"
	"thrum/machine/wavio"
)

// Ingest: recordings at other rates than the working rate, their bandwidth,
// and their channels. A recording at another rate is resampled clip by clip
// with the project's Kaiser-windowed polyphase resampler (exact phases for
// a rational ratio such as 48 kHz → 16 kHz = 1/3 or 44.1 kHz → 16 kHz =
// 160/441); its passband ends at BandFraction of the lower of the two
// rates. So that the recorder never becomes a cue between conditions or
// splits, every clip of a machine is then low-passed to the narrowest band
// among its recordings (see harmonise).

// BandFraction is the usable band of a recording at rate fs after
// resampling, as a fraction of fs: the resampler's passband edge, 0.9 of
// the Nyquist frequency.
const BandFraction = 0.45

// MaxBandwidth is the largest bandwidth_hz, as a fraction of the working
// rate (a filter needs room for its transition band below Nyquist).
const MaxBandwidth = BandFraction

var ratePlans dsp.Plans

// ratePlan returns the cached resampler from rate src to rate work.
func ratePlan(src, work int) *dsp.Resampler {
	return ratePlans.Resampler(float64(src) / float64(work))
}

// Resample converts a whole signal x at rate from to rate to (into dst,
// reused when large enough), with the plan recordings use.
func Resample(dst, x []float64, from, to int) []float64 {
	if from == to {
		return append(dst[:0], x...)
	}
	return ratePlan(from, to).Apply(dst, x)
}

// resampleRatio is the conversion ratio out/in reduced, e.g. "160/441".
func resampleRatio(src, work int) string {
	g := gcdInt(src, work)
	return fmt.Sprintf("%d/%d", work/g, src/g)
}

func gcdInt(a, b int) int {
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

var lowPasses struct {
	sync.Mutex
	m map[[2]float64]*dsp.LowPass
}

// lowPass returns the cached low-pass to bw Hz at rate fs: flat to bw, at
// least 80 dB down from min(bw/0.9, fs/2) (the transition band of a
// resampled recording whose band is bw).
func lowPass(bw float64, fs int) *dsp.LowPass {
	lowPasses.Lock()
	defer lowPasses.Unlock()
	k := [2]float64{bw, float64(fs)}
	if lp := lowPasses.m[k]; lp != nil {
		return lp
	}
	if lowPasses.m == nil {
		lowPasses.m = map[[2]float64]*dsp.LowPass{}
	}
	stop := math.Min(bw/(2*BandFraction), float64(fs)/2)
	lp := dsp.NewLowPass(bw/float64(fs), stop/float64(fs))
	lowPasses.m[k] = lp
	return lp
}

// splitChannels applies the condition's channel mode to a scanned
// recording: mean keeps it, "N" selects channel N, "each" returns one
// recording per channel (same file, same split group, Rel suffixed
// "#chN").
func (inv *Inventory) splitChannels(m *Machine, c *Condition, rec *Recording) []*Recording {
	kind, n, err := ParseChannels(m.ChannelMode(c))
	ch := rec.Format.Channels
	if err != nil || rec.Err != nil || ch == 0 || kind == ChannelsMean {
		return []*Recording{rec}
	}
	if kind == ChannelsEach {
		if ch == 1 {
			return []*Recording{rec}
		}
		out := make([]*Recording, ch)
		for k := range out {
			cp := *rec
			cp.File, cp.Channel = rec.Rel, k+1
			cp.Rel = fmt.Sprintf("%s#ch%d", rec.Rel, k+1)
			out[k] = &cp
		}
		return out
	}
	if n > ch {
		rec.Err = fmt.Errorf("channel %d asked for (channels = %q), the file has %d", n, m.ChannelMode(c), ch)
		rec.Clips = nil
		inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Condition: c.Name, Path: rec.Rel, Kind: "bad-channel", Msg: rec.Err.Error() + "; not used"})
		return []*Recording{rec}
	}
	rec.Channel = n
	return []*Recording{rec}
}

// harmonise sets the bandwidth of every usable recording of machine m:
// bandwidth_hz when the plant sets it, else, when any recording is at
// another rate than the working rate, BandFraction × the lowest of the
// source and working rates. A recording whose own band (the working
// Nyquist frequency at the working rate, BandFraction × the lower rate
// when resampled) is wider is low-passed; when every recording is at the
// working rate and no bandwidth is set nothing changes.
func (inv *Inventory) harmonise(m *Machine) {
	work := inv.Plant.SampleRate
	var recs []*Recording
	low, other := work, false
	for _, r := range inv.Recordings {
		if r.Machine != m.ID || r.Err != nil {
			continue
		}
		recs = append(recs, r)
		if rate := r.Format.SampleRate; rate != work {
			other = true
			low = min(low, rate)
		}
	}
	bw := m.BandwidthHz
	if bw == 0 && !other {
		return
	}
	if bw == 0 {
		bw = BandFraction * float64(low)
	}
	for _, r := range recs {
		own := float64(work) / 2
		if rate := r.Format.SampleRate; rate != work {
			own = BandFraction * float64(min(rate, work))
		}
		r.BandwidthHz = bw
		if own > bw*(1+1e-9) {
			r.Lowpass = true
			r.WorkRate = work
		}
	}
}

// converted reports whether ReadClips must go beyond the plain channel
// mean at the file's own rate.
func (r *Recording) converted() bool {
	return r.Channel > 0 || r.Resample != "" || r.Lowpass
}

// WorkFrames is the recording's length in working-rate frames: Frames, or
// the resampled length when it is resampled.
func (r *Recording) WorkFrames() int64 {
	if r.Resample == "" {
		return r.Frames
	}
	return int64(ratePlan(r.Format.SampleRate, r.WorkRate).Len(int(r.Frames)))
}

// converter computes working-rate samples of a recording from the window
// of the file its kernels read, so results do not depend on where a span
// starts or how the recording is cut.
type converter struct {
	src  *monoSource
	rs   *dsp.Resampler
	lp   *dsp.LowPass
	work int64 // working-rate frames
	seg  []float64
}

func (r *Recording) newConverter(f *wavio.File) *converter {
	cv := &converter{src: &monoSource{f: f, ch: r.Format.Channels, sel: r.Channel - 1}, work: r.Frames}
	if r.Resample != "" {
		cv.rs = ratePlan(r.Format.SampleRate, r.WorkRate)
		cv.work = int64(cv.rs.Len(int(r.Frames)))
	}
	if r.Lowpass {
		cv.lp = lowPass(r.BandwidthHz, r.WorkRate)
	}
	return cv
}

// span fills dst with working-rate samples [start, start+len(dst)); spans
// must not move backwards.
func (cv *converter) span(dst []float64, start int64) error {
	h := 0
	if cv.lp != nil {
		h = cv.lp.Half()
	}
	n := len(dst) + 2*h
	cv.seg = grow(cv.seg, n)
	seg := cv.seg
	m0 := start - int64(h)
	if cv.rs == nil {
		x, x0, err := cv.src.window(m0, m0+int64(n))
		if err != nil {
			return err
		}
		for i := range seg {
			seg[i] = 0
			if k := m0 + int64(i) - x0; k >= 0 && k < int64(len(x)) {
				seg[i] = x[k]
			}
		}
	} else {
		lo, hi := cv.rs.Support(m0, n)
		x, x0, err := cv.src.window(lo, hi)
		if err != nil {
			return err
		}
		cv.rs.ApplyAt(seg, x, x0, m0)
		for i := range seg {
			if m := m0 + int64(i); m < 0 || m >= cv.work {
				seg[i] = 0
			}
		}
	}
	if cv.lp != nil {
		cv.lp.ApplyValid(dst, seg)
	} else {
		copy(dst, seg)
	}
	return nil
}

// readConverted is ReadClips for a recording that selects a channel, is
// resampled or is low-passed.
func (r *Recording) readConverted(clips []Clip, fn func(c Clip, x []float64) error) error {
	f, err := wavio.Open(r.Path)
	if err != nil {
		return err
	}
	defer f.Close()
	cv := r.newConverter(f)
	var out []float64
	for _, c := range clips {
		want := int(c.Frames - c.Pad)
		out = grow(out, int(c.Frames))
		clear(out)
		if err := cv.span(out[:want], c.Start); err != nil {
			return err
		}
		if err := fn(c, out); err != nil {
			return err
		}
	}
	return nil
}

// readSpanConverted is ReadSpan through the converter (also for FLAC,
// whose frames have no byte offset to seek to).
func (r *Recording) readSpanConverted(dst []float64, start, frames int64) ([]float64, error) {
	f, err := wavio.Open(r.Path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	dst = grow(dst, int(frames))
	if err := r.newConverter(f).span(dst, start); err != nil {
		return nil, err
	}
	return dst, nil
}

func grow(b []float64, n int) []float64 {
	if cap(b) < n {
		return make([]float64, n)
	}
	return b[:n]
}

// monoSource reads a file forward as one mono stream (channel sel, or the
// channel mean when sel < 0), keeping the samples a later window may still
// need.
type monoSource struct {
	f        *wavio.File
	ch, sel  int
	buf      []float64 // mono samples from frame start
	start    int64
	frame    []float64
	finished bool
}

// window returns the samples of frames [max(lo,0), hi) that the file has,
// and the frame index of the first. Requests must not move backwards.
func (s *monoSource) window(lo, hi int64) ([]float64, int64, error) {
	lo = max(lo, 0)
	end := s.start + int64(len(s.buf))
	switch {
	case lo >= end:
		s.buf = s.buf[:0]
		if lo > end && !s.finished && s.f.Format().Codec == "" && s.f.SeekFrame(lo) == nil {
			// a WAV file seeks where FLAC reads forward
			end = lo
		}
		if lo > end && !s.finished {
			if err := s.f.Skip(lo - end); err != nil {
				if !errors.Is(err, io.EOF) {
					return nil, 0, err
				}
				s.finished = true
			}
		}
		s.start = lo
	case lo > s.start:
		s.buf = append(s.buf[:0], s.buf[lo-s.start:]...)
		s.start = lo
	}
	for !s.finished && s.start+int64(len(s.buf)) < hi {
		need := int(hi - s.start - int64(len(s.buf)))
		if cap(s.frame) < need*s.ch {
			s.frame = make([]float64, need*s.ch)
		}
		k, err := s.f.ReadFrames(s.frame[:need*s.ch])
		for i := 0; i < k; i++ {
			fr := s.frame[i*s.ch : (i+1)*s.ch]
			if s.sel >= 0 {
				s.buf = append(s.buf, fr[s.sel])
				continue
			}
			var v float64
			for _, x := range fr {
				v += x
			}
			s.buf = append(s.buf, v*(1/float64(s.ch)))
		}
		if errors.Is(err, io.EOF) || k == 0 {
			s.finished = true
		} else if err != nil {
			return nil, 0, err
		}
	}
	n := min(int64(len(s.buf)), max(hi-s.start, 0))
	return s.buf[:n], s.start, nil
}
