package exposure

import (
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
)

// ReferenceHours is the length of the reference working day.
const ReferenceHours = 8

// Input limits.
const (
	MinLevel = 0   // dB(A)
	MaxLevel = 200 // dB(A)
	MaxHours = 24
)

// Caution is a short safety note for anyone recording next to running
// machinery.
const Caution = `Recording near running machinery:
- Hearing protection at and above 85 dB(A) over a shift; each +3 dB halves safe time.
- Keep yourself and cables clear of rotating shafts, couplings, belts and fan intakes.
- Fit or move sensors only under the site's lock-out/tag-out procedure.
- Never remove or open a guard to place a microphone.
- Local regulations and the site's safety rules take precedence over these notes.`

// Criterion is an exchange-rate noise criterion.
type Criterion struct {
	Name string
	// LevelDBA is the criterion level: the steady level allowed for 8 h.
	LevelDBA float64
	// ExchangeDB is the exchange rate: each step this large halves the
	// permitted time.
	ExchangeDB float64
}

// NIOSH is the NIOSH recommended exposure limit: 85 dB(A) for 8 h, 3-dB
// exchange rate (NIOSH 98-126).
func NIOSH() Criterion { return Criterion{Name: "NIOSH REL", LevelDBA: 85, ExchangeDB: 3} }

// OSHA is the OSHA permissible exposure limit: 90 dB(A) for 8 h, 5-dB
// exchange rate (29 CFR 1910.95).
func OSHA() Criterion { return Criterion{Name: "OSHA PEL", LevelDBA: 90, ExchangeDB: 5} }

// AllowedHours is the permitted daily time at a steady level in hours,
// 8 / 2^((level − Lc)/Q). It is not capped at 24 h.
func (c Criterion) AllowedHours(level float64) float64 {
	return ReferenceHours / math.Exp2((level-c.LevelDBA)/c.ExchangeDB)
}

// Dose is the daily dose in percent of hours at a steady level:
// 100·hours/AllowedHours(level).
func (c Criterion) Dose(level, hours float64) float64 {
	return 100 * hours / c.AllowedHours(level)
}

// TWA is the 8-h time-weighted average level in dB(A) that gives the
// dose (in percent): Lc + Q/log10(2)·log10(dose/100). A dose of 0 gives
// −Inf.
func (c Criterion) TWA(dose float64) float64 {
	return c.LevelDBA + c.ExchangeDB/math.Log10(2)*math.Log10(dose/100)
}

// LEX8h is the daily noise exposure level normalised to an 8-h day,
// level + 10·log10(hours/8) (Directive 2003/10/EC, Art. 2).
func LEX8h(level, hours float64) float64 {
	return level + 10*math.Log10(hours/ReferenceHours)
}

// EUValue is one of the daily exposure values of Directive 2003/10/EC.
type EUValue struct {
	Name     string
	LevelDBA float64 // on LEX,8h
}

// EUValues are the daily exposure values of Directive 2003/10/EC, Art. 3,
// lowest first.
func EUValues() []EUValue {
	return []EUValue{
		{Name: "lower exposure action value", LevelDBA: 80},
		{Name: "upper exposure action value", LevelDBA: 85},
		{Name: "exposure limit value", LevelDBA: 87},
	}
}

// Assessment is a steady level and time judged against one criterion.
type Assessment struct {
	Criterion    Criterion
	AllowedHours float64
	Dose         float64 // percent
	TWA          float64 // dB(A)
}

// Report holds every figure for a steady level held for some hours a day.
type Report struct {
	LevelDBA float64
	Hours    float64
	NIOSH    Assessment
	OSHA     Assessment
	// LEX8h is the 8-h-normalised exposure level, dB(A).
	LEX8h float64
	// EUReached lists the EU exposure values LEX8h reaches (rounded to
	// 0.1 dB), lowest first; empty when it reaches none.
	EUReached []EUValue
}

// ErrInput is wrapped by every error NewReport returns.
var ErrInput = errors.New("exposure: invalid input")

// NewReport computes the report for a steady level (dB(A)) held for hours
// a day. The level must lie in [0, 200] dB(A) and hours in (0, 24].
func NewReport(level, hours float64) (Report, error) {
	if !(level >= MinLevel && level <= MaxLevel) {
		return Report{}, fmt.Errorf("%w: level %g dB(A) outside %d … %d dB(A)", ErrInput, level, MinLevel, MaxLevel)
	}
	if !(hours > 0 && hours <= MaxHours) {
		return Report{}, fmt.Errorf("%w: hours %g outside (0, %d]", ErrInput, hours, MaxHours)
	}
	r := Report{LevelDBA: level, Hours: hours, LEX8h: LEX8h(level, hours)}
	for _, a := range []struct {
		dst *Assessment
		c   Criterion
	}{{&r.NIOSH, NIOSH()}, {&r.OSHA, OSHA()}} {
		d := a.c.Dose(level, hours)
		*a.dst = Assessment{Criterion: a.c, AllowedHours: a.c.AllowedHours(level), Dose: d, TWA: a.c.TWA(d)}
	}
	lex := math.Round(r.LEX8h*10) / 10
	for _, v := range EUValues() {
		if lex >= v.LevelDBA {
			r.EUReached = append(r.EUReached, v)
		}
	}
	return r, nil
}

// Format writes the report as text, followed by Caution.
func (r Report) Format(w io.Writer) error {
	var b strings.Builder
	fmt.Fprintf(&b, "Noise exposure at %.1f dB(A) for %s a day\n\n", r.LevelDBA, Duration(r.Hours))
	for _, a := range []Assessment{r.NIOSH, r.OSHA} {
		fmt.Fprintf(&b, "%-10s (%g dB(A), %g-dB exchange): permitted %s, dose %s, TWA %.1f dB(A)\n",
			a.Criterion.Name, a.Criterion.LevelDBA, a.Criterion.ExchangeDB,
			Duration(a.AllowedHours), percent(a.Dose), a.TWA)
	}
	fmt.Fprintf(&b, "EU 2003/10/EC: LEX,8h %.1f dB(A)", r.LEX8h)
	if len(r.EUReached) == 0 {
		b.WriteString(", below the lower exposure action value (80 dB(A))\n")
	} else {
		top := r.EUReached[len(r.EUReached)-1]
		fmt.Fprintf(&b, ", reaches the %s (%g dB(A))\n", top.Name, top.LevelDBA)
	}
	b.WriteString("\n")
	b.WriteString(Caution)
	b.WriteString("\n")
	_, err := io.WriteString(w, b.String())
	return err
}

func percent(d float64) string {
	switch {
	case d >= 1e6:
		return fmt.Sprintf("%.3g %%", d)
	case d >= 10:
		return fmt.Sprintf("%.0f %%", d)
	default:
		return fmt.Sprintf("%.1f %%", d)
	}
}

// Duration renders hours for people: "8 h", "1 h 30 min", "15 min",
// "56 s", "more than 24 h". It rounds to the minute above one minute.
func Duration(hours float64) string {
	if hours > MaxHours {
		return "more than 24 h"
	}
	s := hours * 3600
	if s < 59.5 {
		if s < 0.5 {
			return "less than 1 s"
		}
		return fmt.Sprintf("%.0f s", s)
	}
	m := int(math.Round(s / 60))
	h, m := m/60, m%60
	switch {
	case h == 0:
		return fmt.Sprintf("%d min", m)
	case m == 0:
		return fmt.Sprintf("%d h", h)
	default:
		return fmt.Sprintf("%d h %d min", h, m)
	}
}
