package augment

import (
	"math"

	"thrum/machine"
	"thrum/machine/ledger"
)

// RejectNoRoomForSpeed: the recording is shorter than the source span a
// speed change needs to fill one clip (ratio × clip length), so the output
// would have to be padded; it is rejected instead.
const RejectNoRoomForSpeed = "no-room-for-speed"

// speedSpan is the source a clip changed by a speed ratio r reads, so that
// the change gives exactly one clip length without padding.
//
// Output sample m of the clip is source instant Start + m·r, m = 0..n−1:
// the clip shows Frames = ⌈n·r⌉ source frames from Start. Start is the
// clip's own start, moved back within the recording when the span and the
// filter's reach after it would run past its end. The resampler also reads
// up to its filter's length on each side of the span where the recording
// has it (ReadStart, ReadFrames), so the edges are filtered from real
// samples rather than zeros; Skip is the number of resampled samples
// before Start, which are dropped.
type speedSpan struct {
	Start, Frames         int64
	ReadStart, ReadFrames int64
	Skip                  int
}

// planSpeedSpan places the span of a clip of n frames starting at
// clipStart in a recording of total frames, for the plan rs. It reports
// false when the recording is shorter than the span.
func planSpeedSpan(clipStart, n, total int64, rs *Resampler) (speedSpan, bool) {
	var frames int64
	ip, iq, exact := rs.Fraction()
	if exact {
		p, q := int64(ip), int64(iq)
		frames = (n*p + q - 1) / q // ⌈n·p/q⌉ in integers
	} else {
		frames = int64(math.Ceil(float64(n) * rs.Ratio()))
	}
	if frames > total || n <= 0 {
		return speedSpan{}, false
	}
	// The filter's reach on each side, in source frames: the whole kernel
	// length is more than enough for either side.
	margin := int64(rs.Taps())
	// Near the end the span moves back, far enough for the trailing
	// margin too when the recording has room for it.
	sp := speedSpan{Start: min(clipStart, max(0, total-frames-margin)), Frames: frames}
	// The lead must be a whole number of outputs: a multiple of p source
	// frames for an exact-phase plan p/q. An interpolated plan reads no
	// lead (its first outputs see zeros before the span, as a clip did).
	var lead int64
	if exact {
		p := int64(ip)
		lead = (margin + p - 1) / p * p
		if lead > sp.Start {
			lead = sp.Start / p * p
		}
		sp.Skip = int(lead * int64(iq) / p)
	}
	trail := min(margin, total-sp.Start-frames)
	sp.ReadStart, sp.ReadFrames = sp.Start-lead, lead+frames+trail
	return sp, true
}

// speedSource returns n samples from clip c's start changed by speed ratio
// r, read from the recording (see speedSpan), and the span; n is the clip's
// length, or the longer span a variant's tempo steps read (TempoSpan). ok
// is false when the recording has no room for the span.
func (e *env) speedSource(ws *workspace, rec *machine.Recording, c machine.Clip, n int64, r float64) ([]float64, speedSpan, bool, error) {
	plans := e.plans
	if plans == nil {
		plans = &Plans{}
	}
	rs := plans.Resampler(r)
	sp, ok := planSpeedSpan(c.Start, n, rec.WorkFrames(), rs)
	if !ok {
		return nil, sp, false, nil
	}
	src, err := rec.ReadSpan(ws.src, sp.ReadStart, sp.ReadFrames)
	if err != nil {
		return nil, sp, false, err
	}
	ws.src = src
	y := rs.Apply(ws.spd, src)
	ws.spd = y
	return y[sp.Skip : sp.Skip+int(n)], sp, true, nil
}

// tempoSource returns the n source frames a variant with tempo steps and
// no speed change starts from: from the clip's start, moved back within
// the recording when they would run past its end, and the span's start.
// ok is false when the recording is shorter than n.
func (e *env) tempoSource(ws *workspace, rec *machine.Recording, c machine.Clip, n int64) ([]float64, int64, bool, error) {
	total := rec.WorkFrames()
	if n > total || n <= 0 {
		return nil, 0, false, nil
	}
	start := min(c.Start, total-n)
	src, err := rec.ReadSpan(ws.src, start, n)
	if err != nil {
		return nil, 0, false, err
	}
	ws.src = src
	return src, start, true, nil
}

// spanMarked adds to the records a draw hash is taken of a marker for
// outputs whose speed changes (ratio ≠ 1): they read the source span of
// speedSpan, so a ledger line written when such outputs still read only
// their clip does not match and the output is made again. Other outputs'
// draw hashes stay as they were.
func spanMarked(recs []ledger.StepRecord, ratio float64) []ledger.StepRecord {
	if ratio == 1 {
		return recs
	}
	return append(recs[:len(recs):len(recs)], ledger.StepRecord{Kind: "source-span", Params: map[string]float64{"version": 1}})
}

// drawnMarked is spanMarked for drawn recipe steps, with one more marker
// for variants with a tempo step: they read the source span TempoSpan and
// write exactly one clip, so a ledger line written when tempo changed the
// output's length does not match and the output is made again.
func drawnMarked(drawn []Drawn) []ledger.StepRecord {
	recs := spanMarked(records(drawn), ResampledSpeedOf(drawn))
	if _, ok := TempoSpan(drawn, 0); ok {
		recs = append(recs[:len(recs):len(recs)], ledger.StepRecord{Kind: "tempo-span", Params: map[string]float64{"version": 1}})
	}
	return recs
}
