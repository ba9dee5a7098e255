package machine

import (
	"fmt"
	"math"
	"path"
)

// Quality gate defaults (plant.toml [quality] table). Each is common
// practice in audio corpus checks, not a measured optimum; a plant sets its
// own where its recordings need it.
const (
	// DefaultClipRun: a flat top is at least 3 consecutive equal samples at
	// the extreme (common practice: clip detectors and sox's "flat factor"
	// count runs of equal samples at the peak level; one or two equal
	// samples happen by chance).
	DefaultClipRun = 3
	// DefaultClipLevelDBFS: only flat tops within 1 dB of full scale count,
	// so the quantised crest of a slow, quiet tone is not called clipped
	// (common practice: peak normalisation targets −1 … −0.1 dBFS, so a
	// clipped-then-normalised take still qualifies).
	DefaultClipLevelDBFS = -1.0
	// DefaultMaxClippedPercent: more than 0.1 % of samples in flat tops
	// excludes a recording (common practice).
	DefaultMaxClippedPercent = 0.1
	// DefaultMaxDC: a mean beyond ±5 % of full scale (about −26 dBFS)
	// excludes a recording (common practice flags DC offsets of a few per
	// cent of full scale as a recorder fault; 5 % leaves room for the bias
	// of accelerometer records, which measured bearing data shows at 3 %).
	DefaultMaxDC = 0.05
	// DefaultMinRMSDBFS: an RMS below −70 dBFS is a dead or unplugged
	// channel rather than a machine (common practice: the noise floor of a
	// working 16-bit chain with a microphone lies well above it).
	DefaultMinRMSDBFS = -70.0
)

// Quality is the [quality] table: the thresholds of the recording quality
// gate, and the recordings the plant accepts despite it. Absent keys take
// the defaults above (see Thresholds).
type Quality struct {
	MaxClippedPercent *float64 `toml:"max_clipped_percent"`
	ClipRun           *int     `toml:"clip_run"`
	ClipLevelDBFS     *float64 `toml:"clip_level_dbfs"`
	MaxDC             *float64 `toml:"max_dc"`
	MinRMSDBFS        *float64 `toml:"min_rms_dbfs"`
	// Accept lists recordings used although the gate would exclude them.
	Accept []Accept `toml:"accept"`
}

// Accept names one recording ([[quality.accept]]) the gate lets through.
type Accept struct {
	// Path is the recording relative to the recordings root, slash-separated.
	Path string `toml:"path"`
	// Reason says why it is accepted; it is required and shown by survey.
	Reason string `toml:"reason"`
}

// Thresholds are the resolved gate thresholds.
type Thresholds struct {
	MaxClippedPercent float64 `json:"max_clipped_percent"`
	ClipRun           int     `json:"clip_run"`
	ClipLevelDBFS     float64 `json:"clip_level_dbfs"`
	MaxDC             float64 `json:"max_dc"`
	MinRMSDBFS        float64 `json:"min_rms_dbfs"`
}

// Thresholds returns the table's thresholds with defaults for absent keys.
func (q *Quality) Thresholds() Thresholds {
	t := Thresholds{DefaultMaxClippedPercent, DefaultClipRun, DefaultClipLevelDBFS, DefaultMaxDC, DefaultMinRMSDBFS}
	if q == nil {
		return t
	}
	if q.MaxClippedPercent != nil {
		t.MaxClippedPercent = *q.MaxClippedPercent
	}
	if q.ClipRun != nil {
		t.ClipRun = *q.ClipRun
	}
	if q.ClipLevelDBFS != nil {
		t.ClipLevelDBFS = *q.ClipLevelDBFS
	}
	if q.MaxDC != nil {
		t.MaxDC = *q.MaxDC
	}
	if q.MinRMSDBFS != nil {
		t.MinRMSDBFS = *q.MinRMSDBFS
	}
	return t
}

// Accepted returns the plant's reason for accepting the recording at rel,
// or "" when the plant does not accept it.
func (q *Quality) Accepted(rel string) string {
	if q == nil {
		return ""
	}
	for _, a := range q.Accept {
		if path.Clean(a.Path) == rel {
			return a.Reason
		}
	}
	return ""
}

func (v *validator) quality(q *Quality) {
	if q == nil {
		return
	}
	if q.MaxClippedPercent != nil {
		v.rangeCheck("quality", "quality.max_clipped_percent", "max_clipped_percent", *q.MaxClippedPercent, 0, 100, "%")
	}
	if q.ClipRun != nil {
		v.rangeCheck("quality", "quality.clip_run", "clip_run", float64(*q.ClipRun), 1, 1000, "samples")
	}
	if q.ClipLevelDBFS != nil {
		v.rangeCheck("quality", "quality.clip_level_dbfs", "clip_level_dbfs", *q.ClipLevelDBFS, -60, 0, "dBFS")
	}
	if q.MaxDC != nil {
		v.rangeCheck("quality", "quality.max_dc", "max_dc", *q.MaxDC, 0, 1, "")
	}
	if q.MinRMSDBFS != nil {
		v.rangeCheck("quality", "quality.min_rms_dbfs", "min_rms_dbfs", *q.MinRMSDBFS, -200, 0, "dBFS")
	}
	seen := map[string]bool{}
	for i, a := range q.Accept {
		loc, key := fmt.Sprintf("quality.accept.%d", i), fmt.Sprintf("quality.accept[%d]", i)
		clean := path.Clean(a.Path)
		switch {
		case a.Path == "":
			v.bad(loc, key+".path", "path", "is required (the recording, relative to the recordings root)")
		case path.IsAbs(a.Path) || clean == ".." || len(clean) > 2 && clean[:3] == "../":
			v.bad(loc, key+".path", "path", "%q must be relative to the recordings root and stay inside it", a.Path)
		case seen[clean]:
			v.bad(loc, key+".path", "path", "%q is accepted twice", a.Path)
		}
		seen[clean] = true
		if a.Reason == "" {
			v.bad(loc, key+".reason", "reason", "is required: say why this recording is used despite the quality gate")
		}
	}
}

// Quality gate reasons: the Problem kinds of a recording the gate excludes.
const (
	GateClipped = "clipped"
	GateDC      = "dc-offset"
	GateQuiet   = "quiet"
)

// QualityError says why the quality gate excludes a recording: its measured
// value against the plant's threshold.
type QualityError struct {
	// Kind is GateClipped, GateDC or GateQuiet.
	Kind      string
	Value     float64
	Threshold float64
}

func (e *QualityError) Error() string {
	switch e.Kind {
	case GateClipped:
		return fmt.Sprintf("%.3g %% of samples are in flat tops near full scale, above quality.max_clipped_percent %g %%", e.Value, e.Threshold)
	case GateDC:
		return fmt.Sprintf("DC offset %+.4f of full scale is beyond quality.max_dc ±%g", e.Value, e.Threshold)
	default:
		return fmt.Sprintf("RMS %.1f dBFS is below quality.min_rms_dbfs %g dBFS", e.Value, e.Threshold)
	}
}

// Gate applies the thresholds to a recording's measured quality: the first
// failed check in the order clipped, DC offset, quiet, or nil.
func (t Thresholds) Gate(q *QualityStats) *QualityError {
	if q == nil {
		return nil
	}
	if pc := 100 * q.Clipped; pc > t.MaxClippedPercent {
		return &QualityError{Kind: GateClipped, Value: pc, Threshold: t.MaxClippedPercent}
	}
	if math.Abs(q.DC) > t.MaxDC {
		return &QualityError{Kind: GateDC, Value: q.DC, Threshold: t.MaxDC}
	}
	if q.RMSDBFS < t.MinRMSDBFS {
		return &QualityError{Kind: GateQuiet, Value: q.RMSDBFS, Threshold: t.MinRMSDBFS}
	}
	return nil
}

// QualityStats are what the gate measures on every sample of a recording.
// For float recordings whose peak lies beyond ±1 (sensor data in physical
// units) full scale is the peak: DC and RMS are relative to it, and a flat
// top at the extreme is the sensor's saturation.
type QualityStats struct {
	// Clipped is the fraction of samples in flat tops: runs of at least
	// ClipRun equal consecutive samples of one channel at that channel's
	// largest or smallest value, within ClipLevelDBFS of full scale.
	Clipped float64 `json:"clipped"`
	// DC is the mean sample value, relative to full scale.
	DC float64 `json:"dc"`
	// RMSDBFS is the RMS over all channels, dB relative to full scale.
	RMSDBFS float64 `json:"rms_dbfs"`
	// FullScale is 1, or the peak of a float recording beyond ±1.
	FullScale float64 `json:"full_scale"`
}

// flatTops counts, per channel, the samples in runs of at least run equal
// consecutive values at the channel's running maximum and minimum. It is fed
// interleaved samples in order; a new extreme discards the runs counted at
// the old one, so at the end the counts are those at the final extremes.
type flatTops struct {
	ch, run int
	lo, hi  []float64 // channel extremes so far
	nLo     []int64   // samples in qualifying runs at lo
	nHi     []int64
	cur     []float64 // value of the current run
	curLen  []int64
}

func newFlatTops(ch, run int) *flatTops {
	f := &flatTops{ch: ch, run: max(run, 1), lo: make([]float64, ch), hi: make([]float64, ch),
		nLo: make([]int64, ch), nHi: make([]int64, ch), cur: make([]float64, ch), curLen: make([]int64, ch)}
	for c := 0; c < ch; c++ {
		f.lo[c], f.hi[c] = math.Inf(1), math.Inf(-1)
	}
	return f
}

// add feeds interleaved samples starting at channel 0.
func (f *flatTops) add(x []float64) {
	for i, v := range x {
		c := i % f.ch
		if v == f.cur[c] && f.curLen[c] > 0 {
			f.curLen[c]++
		} else {
			f.end(c)
			f.cur[c], f.curLen[c] = v, 1
		}
		if v > f.hi[c] {
			f.hi[c], f.nHi[c] = v, 0
		}
		if v < f.lo[c] {
			f.lo[c], f.nLo[c] = v, 0
		}
	}
}

// end closes channel c's current run.
func (f *flatTops) end(c int) {
	if f.curLen[c] >= int64(f.run) {
		if f.cur[c] == f.hi[c] {
			f.nHi[c] += f.curLen[c]
		}
		if f.cur[c] == f.lo[c] && f.lo[c] != f.hi[c] {
			f.nLo[c] += f.curLen[c]
		}
	}
	f.curLen[c] = 0
}

// count closes every run and returns the samples in flat tops whose level
// is at least floor (a magnitude).
func (f *flatTops) count(floor float64) int64 {
	var n int64
	for c := 0; c < f.ch; c++ {
		f.end(c)
		if math.Abs(f.hi[c]) >= floor && f.hi[c] > 0 {
			n += f.nHi[c]
		}
		if math.Abs(f.lo[c]) >= floor && f.lo[c] < 0 {
			n += f.nLo[c]
		}
	}
	return n
}

// MeasureQuality computes a recording's QualityStats from its interleaved
// samples (the gate's view of decoded samples, as Scan measures a file).
func MeasureQuality(x []float64, channels int, t Thresholds) *QualityStats {
	channels = max(channels, 1)
	ft := newFlatTops(channels, t.ClipRun)
	ft.add(x)
	var sum, sq, peak float64
	for _, v := range x {
		sum += v
		sq += v * v
		peak = math.Max(peak, math.Abs(v))
	}
	return qualityOf(ft, sum, sq, peak, int64(len(x)), t)
}

func qualityOf(ft *flatTops, sum, sq, peak float64, n int64, t Thresholds) *QualityStats {
	if n == 0 {
		return nil
	}
	fs := math.Max(1, peak)
	floor := fs * math.Pow(10, t.ClipLevelDBFS/20)
	return &QualityStats{
		Clipped:   float64(ft.count(floor)) / float64(n),
		DC:        sum / float64(n) / fs,
		RMSDBFS:   DB(sq / float64(n) / (fs * fs)),
		FullScale: fs,
	}
}
