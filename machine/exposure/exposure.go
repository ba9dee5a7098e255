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
	// CeilingDBA, when above 0, is the level above which no exposure of
	// any duration is permitted.
	CeilingDBA float64
	// ThresholdDBA, when above 0, is the lowest level the dose counts:
	// time spent below it adds nothing.
	ThresholdDBA float64
	// TableTopDBA, when above 0, is the highest level the criterion's
	// table of reference durations lists; above it the formula is
	// extrapolated.
	TableTopDBA float64
}

// NIOSH is the NIOSH recommended exposure limit: 85 dB(A) for 8 h, 3-dB
// exchange rate (NIOSH 98-126).
func NIOSH() Criterion { return Criterion{Name: "NIOSH REL", LevelDBA: 85, ExchangeDB: 3} }

// OSHA is the OSHA permissible exposure limit: 90 dB(A) for 8 h, 5-dB
// exchange rate (29 CFR 1910.95(b), Table G-16). Table G-16 ends at
// 115 dB(A) for a quarter of an hour or less: no exposure above 115 dB(A)
// is permitted, whatever its length (the ceiling). The dose of Appendix A
// counts levels from 80 dB(A), where its Table G-16a of reference
// durations starts (32 h), up to 130 dB(A), where it ends (0.031 h);
// 1910.95(d)(2)(i) has monitoring integrate every level from 80 to
// 130 dB(A).
func OSHA() Criterion {
	return Criterion{Name: "OSHA PEL", LevelDBA: 90, ExchangeDB: 5, CeilingDBA: 115, ThresholdDBA: 80, TableTopDBA: 130}
}

// AllowedHours is the reference duration at a steady level in hours,
// 8 / 2^((level − Lc)/Q): the time that makes a 100 % dose. It is not
// capped at 24 h and knows no ceiling; PermittedHours applies the ceiling.
func (c Criterion) AllowedHours(level float64) float64 {
	return ReferenceHours / math.Exp2((level-c.LevelDBA)/c.ExchangeDB)
}

// AboveCeiling reports whether no exposure at all is permitted at level.
func (c Criterion) AboveCeiling(level float64) bool {
	return c.CeilingDBA > 0 && level > c.CeilingDBA
}

// PermittedHours is the permitted daily time at a steady level in hours:
// AllowedHours, or 0 above the ceiling.
func (c Criterion) PermittedHours(level float64) float64 {
	if c.AboveCeiling(level) {
		return 0
	}
	return c.AllowedHours(level)
}

// Counted reports whether the dose counts time spent at level.
func (c Criterion) Counted(level float64) bool {
	return !(c.ThresholdDBA > 0 && level < c.ThresholdDBA)
}

// Dose is the daily dose in percent of hours at a steady level:
// 100·hours/AllowedHours(level), and 0 below the threshold.
func (c Criterion) Dose(level, hours float64) float64 {
	if !c.Counted(level) {
		return 0
	}
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
	Criterion Criterion
	// AllowedHours is the permitted daily time (PermittedHours): 0 when
	// the level is above the criterion's ceiling.
	AllowedHours float64
	// AboveCeiling: no exposure at this level is permitted.
	AboveCeiling bool
	// Counted: the level is at or above the criterion's threshold, so
	// the dose counts it; otherwise Dose is 0 and TWA −Inf.
	Counted bool
	// Extrapolated: the level lies above the criterion's table of
	// reference durations, which the dose formula extends.
	Extrapolated bool
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
		*a.dst = Assessment{Criterion: a.c, AllowedHours: a.c.PermittedHours(level),
			AboveCeiling: a.c.AboveCeiling(level), Counted: a.c.Counted(level),
			Extrapolated: a.c.TableTopDBA > 0 && level > a.c.TableTopDBA,
			Dose:         d, TWA: a.c.TWA(d)}
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
		c := a.Criterion
		fmt.Fprintf(&b, "%-10s (%g dB(A), %g-dB exchange): ", c.Name, c.LevelDBA, c.ExchangeDB)
		if a.AboveCeiling {
			fmt.Fprintf(&b, "not permitted (no exposure above %g dB(A))", c.CeilingDBA)
		} else {
			fmt.Fprintf(&b, "permitted %s", Duration(a.AllowedHours))
		}
		switch {
		case !a.Counted:
			fmt.Fprintf(&b, ", dose 0 %% (levels below %g dB(A) are not counted)\n", c.ThresholdDBA)
			continue
		case a.Extrapolated:
			fmt.Fprintf(&b, ", dose %s (extrapolated above %g dB(A))", percent(a.Dose), c.TableTopDBA)
		default:
			fmt.Fprintf(&b, ", dose %s", percent(a.Dose))
		}
		fmt.Fprintf(&b, ", TWA %.1f dB(A)\n", a.TWA)
	}
	if r.OSHA.AboveCeiling {
		fmt.Fprintf(&b, "OSHA: no exposure above %g dB(A) (29 CFR 1910.95 Table G-16); impact or impulsive noise should not exceed 140 dB peak SPL\n", r.OSHA.Criterion.CeilingDBA)
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
