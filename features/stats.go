package features

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"thrum/machine"
)

var posInf = math.Inf(1)

// LevelFloorDB is the lowest level Summarize reports (amplitude 1e-10), so
// that silence gives a finite number.
const LevelFloorDB = -200

// Summary holds per-clip statistics of a signal in [-1, 1].
type Summary struct {
	Samples int     `json:"samples"`
	Seconds float64 `json:"seconds"`
	// RMSdBFS and PeakdBFS are 20·log10 of the RMS and of max|x|, re 1 (a
	// full-scale square wave; a full-scale sine has RMS −3.01 dBFS).
	RMSdBFS  float64 `json:"rms_dbfs"`
	PeakdBFS float64 `json:"peak_dbfs"`
	// CrestDB is PeakdBFS − RMSdBFS; Crest is peak/RMS (√2 for a sine).
	CrestDB float64 `json:"crest_db"`
	Crest   float64 `json:"crest"`
	// DC is the mean of x.
	DC float64 `json:"dc"`
	// Kurtosis is m4/m2² of x − mean (Pearson's, not excess: 3 for Gaussian
	// noise, 1.5 for a sine; impacts raise it). 0 for a constant signal.
	Kurtosis float64 `json:"kurtosis"`
	// ZeroCrossings is the rate of sign changes per second.
	ZeroCrossings float64 `json:"zero_crossings_per_s"`
	// Spectral shape of the mean power spectrum over STFT frames, bins 1 to
	// NFFT/2 (DC excluded): power-weighted mean frequency and standard
	// deviation, the frequency below which 85 % of the power lies, and the
	// flatness 10·log10(geometric mean / arithmetic mean) (0 dB for white
	// noise, very negative for tones). All 0 when the clip is shorter than
	// one frame or silent.
	CentroidHz  float64 `json:"centroid_hz"`
	SpreadHz    float64 `json:"spread_hz"`
	Rolloff85Hz float64 `json:"rolloff85_hz"`
	FlatnessDB  float64 `json:"flatness_db"`
}

// Summarizer computes clip summaries with a reusable STFT plan. It is not
// safe for concurrent use.
type Summarizer struct {
	stft      *STFT
	spec, acc []float64
}

// NewSummarizer builds a summarizer whose spectral statistics use the STFT
// of cfg (NFFT, Hop, Center, Pad; power is always used).
func NewSummarizer(cfg Config) (*Summarizer, error) {
	cfg.Magnitude = false
	s, err := NewSTFT(cfg)
	if err != nil {
		return nil, err
	}
	return &Summarizer{stft: s, spec: make([]float64, s.Bins()), acc: make([]float64, s.Bins())}, nil
}

func levelDB(a float64) float64 {
	return math.Max(20*math.Log10(a), LevelFloorDB)
}

// Summarize computes the summary of x sampled at fs Hz.
func (z *Summarizer) Summarize(x []float64, fs float64) Summary {
	s := z.timeStats(x, fs)
	frames := z.stft.Frames(len(x))
	if len(x) == 0 || frames == 0 {
		return s
	}
	clear(z.acc)
	for i := range frames {
		z.stft.Frame(z.spec, x, i)
		for k, v := range z.spec {
			z.acc[k] += v
		}
	}
	z.spectral(&s, z.acc, fs)
	return s
}

// SummarizePower is Summarize with the spectral statistics taken from power,
// the sums over the frames of the power spectra of x under the
// summarizer's STFT settings (NFFT/2+1 values; LogMel.ComputePower of the
// same configuration forms them in the same order, so the summary is the
// one Summarize gives), and frames, the number of frames summed. It panics
// if power does not hold NFFT/2+1 values.
func (z *Summarizer) SummarizePower(x []float64, fs float64, power []float64, frames int) Summary {
	if len(power) != z.stft.Bins() {
		panic(fmt.Sprintf("features: summary power has %d bins, want %d", len(power), z.stft.Bins()))
	}
	s := z.timeStats(x, fs)
	if len(x) == 0 || frames == 0 {
		return s
	}
	z.spectral(&s, power, fs)
	return s
}

// timeStats fills the statistics of the samples themselves.
func (z *Summarizer) timeStats(x []float64, fs float64) Summary {
	s := Summary{Samples: len(x), Seconds: float64(len(x)) / fs}
	if len(x) == 0 {
		s.RMSdBFS, s.PeakdBFS = LevelFloorDB, LevelFloorDB
		return s
	}
	var sum, sq, peak float64
	crossings := 0
	for i, v := range x {
		sum += v
		sq += v * v
		// math.Max(peak, |v|) without its call: NaN wins, except over +Inf
		if a := math.Abs(v); a > peak || a == posInf || (a != a && peak != posInf) {
			peak = a
		}
		if i > 0 && (v >= 0) != (x[i-1] >= 0) {
			crossings++
		}
	}
	n := float64(len(x))
	rms := math.Sqrt(sq / n)
	s.DC = sum / n
	s.RMSdBFS, s.PeakdBFS = levelDB(rms), levelDB(peak)
	s.CrestDB = s.PeakdBFS - s.RMSdBFS
	if rms > 0 {
		s.Crest = peak / rms
	}
	var m2, m4 float64
	for _, v := range x {
		d := v - s.DC
		d2 := d * d
		m2 += d2
		m4 += d2 * d2
	}
	m2, m4 = m2/n, m4/n
	if m2 > 0 {
		s.Kurtosis = m4 / (m2 * m2)
	}
	s.ZeroCrossings = float64(crossings) / s.Seconds
	return s
}

// spectral fills the spectral shape from acc, the power spectra summed
// over the frames.
func (z *Summarizer) spectral(s *Summary, acc []float64, fs float64) {
	binHz := fs / float64(z.stft.n)
	p := acc[1:]
	var tot, mom, logSum float64
	for j, v := range p {
		f := float64(j+1) * binHz
		tot += v
		mom += v * f
		logSum += math.Log(math.Max(v, 1e-300))
	}
	if !(tot > 0) {
		return
	}
	s.CentroidHz = mom / tot
	var spread, cum float64
	roll := -1.0
	for j, v := range p {
		f := float64(j+1) * binHz
		d := f - s.CentroidHz
		spread += v * d * d
		cum += v
		if roll < 0 && cum >= 0.85*tot {
			roll = f
		}
	}
	s.SpreadHz = math.Sqrt(spread / tot)
	s.Rolloff85Hz = roll
	m := float64(len(p))
	s.FlatnessDB = 10 * (logSum/m - math.Log(tot/m)) / math.Ln10
}

// Moments are per-band running moments of feature frames: count, mean and
// sum of squared deviations (Welford 1962), mergeable with the pairwise
// update of Chan, Golub & LeVeque 1979.
type Moments struct {
	N    int64
	Mean []float64
	M2   []float64
}

// ClipMoments returns the moments of a row-major frames × bands array,
// reusing dst's slices when they are large enough. It panics if
// len(feat) < frames·bands.
func ClipMoments(dst Moments, feat []float32, frames, bands int) Moments {
	if frames < 0 || bands < 1 || len(feat) < frames*bands {
		panic(fmt.Sprintf("features: moments: %d values for %d×%d", len(feat), frames, bands))
	}
	dst.N = int64(frames)
	dst.Mean = resize(dst.Mean, bands)
	dst.M2 = resize(dst.M2, bands)
	clear(dst.Mean)
	clear(dst.M2)
	for i := range frames {
		inv := 1 / float64(i+1)
		row := feat[i*bands : (i+1)*bands]
		for b, v := range row {
			x := float64(v)
			d := x - dst.Mean[b]
			dst.Mean[b] += d * inv
			dst.M2[b] += d * (x - dst.Mean[b])
		}
	}
	return dst
}

func resize(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// Merge adds o into m. Both must have the same band count (or m be empty).
// The result depends in its last bits on the order of merges, so merge in
// a fixed order for byte-identical output.
func (m *Moments) Merge(o Moments) {
	if o.N == 0 {
		return
	}
	if m.N == 0 {
		m.N = o.N
		m.Mean = append(m.Mean[:0], o.Mean...)
		m.M2 = append(m.M2[:0], o.M2...)
		return
	}
	if len(o.Mean) != len(m.Mean) {
		panic(fmt.Sprintf("features: moments: merging %d bands into %d", len(o.Mean), len(m.Mean)))
	}
	na, nb := float64(m.N), float64(o.N)
	n := na + nb
	for b := range m.Mean {
		d := o.Mean[b] - m.Mean[b]
		m.Mean[b] += d * nb / n
		m.M2[b] += o.M2[b] + d*d*na*nb/n
	}
	m.N += o.N
}

// Stats are per-band normalisation statistics of feature frames. Inputs
// lists every file that went into them, so an audit can check that they
// were all training files.
type Stats struct {
	Machine string   `json:"machine"`
	Inputs  []string `json:"inputs"`
	Frames  int64    `json:"frames"`
	// Mean and Std (population, ÷N) per band, in the feature's units.
	Mean []float64 `json:"mean"`
	Std  []float64 `json:"std"`
}

// Accumulator gathers Stats clip by clip in float64. Add clips in a fixed
// order (for example sorted by path) for byte-identical statistics.
type Accumulator struct {
	bands  int
	inputs []string
	seen   map[string]bool
	m      Moments
	tmp    Moments
}

// NewAccumulator starts statistics over bands bands.
func NewAccumulator(bands int) *Accumulator {
	return &Accumulator{bands: bands, seen: map[string]bool{}}
}

// Add adds the frames × bands features of one input file.
func (a *Accumulator) Add(input string, feat []float32, frames int) error {
	if len(feat) != frames*a.bands {
		return fmt.Errorf("features: stats: %s: %d values for %d frames × %d bands", input, len(feat), frames, a.bands)
	}
	a.tmp = ClipMoments(a.tmp, feat, frames, a.bands)
	return a.AddMoments(input, a.tmp)
}

// AddMoments adds moments computed elsewhere (for example by a worker with
// ClipMoments) for one input file.
func (a *Accumulator) AddMoments(input string, m Moments) error {
	if a.seen[input] {
		return fmt.Errorf("features: stats: input %s added twice", input)
	}
	if m.N > 0 && len(m.Mean) != a.bands {
		return fmt.Errorf("features: stats: %s: %d bands, want %d", input, len(m.Mean), a.bands)
	}
	for b := range m.Mean {
		if math.IsNaN(m.Mean[b]) || math.IsInf(m.Mean[b], 0) || math.IsNaN(m.M2[b]) || math.IsInf(m.M2[b], 0) {
			return fmt.Errorf("features: stats: %s: non-finite feature values in band %d", input, b)
		}
	}
	a.seen[input] = true
	a.inputs = append(a.inputs, input)
	a.m.Merge(m)
	return nil
}

// Stats returns the statistics so far, tagged with the machine id.
func (a *Accumulator) Stats(machine string) Stats {
	s := Stats{
		Machine: machine,
		Inputs:  append([]string{}, a.inputs...),
		Frames:  a.m.N,
		Mean:    make([]float64, a.bands),
		Std:     make([]float64, a.bands),
	}
	if a.m.N == 0 {
		return s
	}
	copy(s.Mean, a.m.Mean)
	for b, v := range a.m.M2 {
		s.Std[b] = math.Sqrt(math.Max(v, 0) / float64(a.m.N))
	}
	return s
}

// minStd is the smallest standard deviation Normalize divides by; bands
// flatter than this (for example empty filters sitting at the floor) are
// only centred.
const minStd = 1e-6

// Normalize replaces each value of the row-major frames × bands array by
// (x − mean)/std per band (std below 1e-6 counts as 1). It panics if the
// array is not frames × len(Mean).
func (s Stats) Normalize(feat []float32, frames int) {
	nb := len(s.Mean)
	if len(feat) != frames*nb || len(s.Std) != nb {
		panic(fmt.Sprintf("features: normalize: %d values for %d frames × %d bands", len(feat), frames, nb))
	}
	inv := make([]float64, nb)
	for b, sd := range s.Std {
		inv[b] = 1
		if sd >= minStd {
			inv[b] = 1 / sd
		}
	}
	for i := range frames {
		row := feat[i*nb : (i+1)*nb]
		for b, v := range row {
			row[b] = float32((float64(v) - s.Mean[b]) * inv[b])
		}
	}
}

// Validate checks that the statistics are usable.
func (s Stats) Validate() error {
	switch {
	case len(s.Mean) == 0 || len(s.Mean) != len(s.Std):
		return fmt.Errorf("features: stats: %d means and %d standard deviations", len(s.Mean), len(s.Std))
	case s.Frames <= 0:
		return fmt.Errorf("features: stats: %d frames", s.Frames)
	case len(s.Inputs) == 0:
		return fmt.Errorf("features: stats: no inputs listed")
	}
	for b := range s.Mean {
		if math.IsNaN(s.Mean[b]) || math.IsInf(s.Mean[b], 0) || !(s.Std[b] >= 0) || math.IsInf(s.Std[b], 0) {
			return fmt.Errorf("features: stats: band %d: mean %v, std %v", b, s.Mean[b], s.Std[b])
		}
	}
	return nil
}

// WriteJSON writes s as indented JSON.
func (s Stats) WriteJSON(w io.Writer) error {
	b, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		return fmt.Errorf("features: stats: %w", err)
	}
	if _, err := w.Write(append(b, '\n')); err != nil {
		return fmt.Errorf("features: stats: %w", err)
	}
	return nil
}

// Save writes s to path atomically.
func (s Stats) Save(path string) error {
	var buf bytes.Buffer
	if err := s.WriteJSON(&buf); err != nil {
		return err
	}
	return machine.WriteFileAtomic(path, buf.Bytes())
}

// ReadStats decodes and validates statistics; name is used in errors.
func ReadStats(r io.Reader, name string) (Stats, error) {
	var s Stats
	dec := json.NewDecoder(r)
	dec.DisallowUnknownFields()
	if err := dec.Decode(&s); err != nil {
		return s, fmt.Errorf("features: %s: %w", name, err)
	}
	if err := s.Validate(); err != nil {
		return s, fmt.Errorf("features: %s: %s", name, strings.TrimPrefix(err.Error(), "features: "))
	}
	return s, nil
}

// LoadStats reads statistics from path.
func LoadStats(path string) (Stats, error) {
	f, err := os.Open(path)
	if err != nil {
		return Stats{}, fmt.Errorf("features: %w", err)
	}
	defer f.Close()
	return ReadStats(f, path)
}
