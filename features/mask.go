package features

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Masked values (MaskSpec.Value).
const (
	MaskMean = "mean" // the mean of the whole array before masking
	MaskZero = "zero"
)

// MaskSpec is SpecAugment-style time and frequency masking (Park et al.
// 2019). The zero value masks nothing.
type MaskSpec struct {
	// F is the widest frequency mask in bands; MF is how many are drawn.
	F  int `json:"f"`
	MF int `json:"m_f"`
	// T is the widest time mask in frames, bounded further by P·frames
	// (P in (0, 1]; 0 means 1); MT is how many are drawn.
	T  int     `json:"t"`
	P  float64 `json:"p"`
	MT int     `json:"m_t"`
	// Value is MaskMean (default) or MaskZero.
	Value string `json:"value,omitempty"`
}

// Span is a masked range [Start, Start+Width) of bands or frames.
type Span struct {
	Start int `json:"start"`
	Width int `json:"width"`
}

// MaskRecord says what Apply masked, for the ledger.
type MaskRecord struct {
	Freq  []Span  `json:"freq,omitempty"`
	Time  []Span  `json:"time,omitempty"`
	Value float32 `json:"value"`
	// Fraction is the share of cells masked (overlaps counted once).
	Fraction float64 `json:"fraction"`
}

// Validate reports a spec that Apply would refuse.
func (m MaskSpec) Validate() error {
	switch {
	case m.F < 0 || m.MF < 0 || m.T < 0 || m.MT < 0:
		return fmt.Errorf("features: mask sizes and counts must be ≥ 0 (F %d, m_F %d, T %d, m_T %d)", m.F, m.MF, m.T, m.MT)
	case !(m.P >= 0 && m.P <= 1):
		return fmt.Errorf("features: mask p %v must be in [0, 1]", m.P)
	case m.Value != "" && m.Value != MaskMean && m.Value != MaskZero:
		return fmt.Errorf("features: mask value %q: want %q or %q", m.Value, MaskMean, MaskZero)
	}
	return nil
}

// Apply masks dst, a row-major frames × bands array, in place and returns
// the record. With ν = bands and τ = frames it draws, in this order: for
// each of the MF frequency masks a width f ~ U{0..F} (capped at ν) then a
// start f0 ~ U{0..ν−f−1} (0 when f = ν); then for each of the MT time masks
// t ~ U{0..min(T, ⌊P·τ⌋)} then t0 ~ U{0..τ−t−1}. Cells in the masks are set
// to the value. Apply panics if the spec is invalid (see Validate), rng is
// nil, or len(dst) < frames·bands.
func (m MaskSpec) Apply(dst []float32, frames, bands int, rng *rand.Rand) MaskRecord {
	if err := m.Validate(); err != nil {
		panic(err.Error())
	}
	if rng == nil {
		panic("features: mask: nil rng")
	}
	if frames < 0 || bands < 0 || len(dst) < frames*bands {
		panic(fmt.Sprintf("features: mask: %d values for %d×%d", len(dst), frames, bands))
	}
	dst = dst[:frames*bands]
	var rec MaskRecord
	if len(dst) == 0 {
		return rec
	}
	if m.Value != MaskZero {
		var sum float64
		for _, v := range dst {
			sum += float64(v)
		}
		rec.Value = float32(sum / float64(len(dst)))
	}
	for range m.MF {
		f := min(rng.IntN(m.F+1), bands)
		f0 := 0
		if bands-f > 0 {
			f0 = rng.IntN(bands - f)
		}
		rec.Freq = append(rec.Freq, Span{f0, f})
	}
	p := m.P
	if p == 0 {
		p = 1
	}
	tmax := min(m.T, int(math.Floor(p*float64(frames))))
	for range m.MT {
		t := rng.IntN(tmax + 1)
		t0 := 0
		if frames-t > 0 {
			t0 = rng.IntN(frames - t)
		}
		rec.Time = append(rec.Time, Span{t0, t})
	}
	fmask := make([]bool, bands)
	fcount := 0
	for _, s := range rec.Freq {
		for b := s.Start; b < s.Start+s.Width; b++ {
			if !fmask[b] {
				fmask[b] = true
				fcount++
			}
		}
	}
	masked := 0
	for i := range frames {
		row := dst[i*bands : (i+1)*bands]
		inTime := false
		for _, s := range rec.Time {
			if i >= s.Start && i < s.Start+s.Width {
				inTime = true
				break
			}
		}
		if inTime {
			for b := range row {
				row[b] = rec.Value
			}
			masked += bands
			continue
		}
		if fcount == 0 {
			continue
		}
		for b, on := range fmask {
			if on {
				row[b] = rec.Value
			}
		}
		masked += fcount
	}
	rec.Fraction = float64(masked) / float64(len(dst))
	return rec
}
