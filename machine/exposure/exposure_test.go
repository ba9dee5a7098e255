package exposure

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
)

func TestNIOSHTable(t *testing.T) {
	// NIOSH, Criteria for a Recommended Standard: Occupational Noise
	// Exposure, Revised Criteria 1998, DHHS (NIOSH) Publication No. 98-126:
	// 85 dB(A) 8 h, 88 → 4 h, 91 → 2 h, 94 → 1 h, 97 → 30 min, 100 → 15 min.
	// The table is exact powers of two of the 3-dB rule.
	tests := []struct{ level, hours float64 }{
		{85, 8}, {88, 4}, {91, 2}, {94, 1}, {97, 0.5}, {100, 0.25},
	}
	c := NIOSH()
	for _, tc := range tests {
		if got := c.AllowedHours(tc.level); math.Abs(got-tc.hours) > 1e-12 {
			t.Errorf("NIOSH AllowedHours(%g) = %g h, want %g h", tc.level, got, tc.hours)
		}
		if d := c.Dose(tc.level, tc.hours); math.Abs(d-100) > 1e-9 {
			t.Errorf("NIOSH dose for the permitted time at %g = %g %%, want 100", tc.level, d)
		}
	}
}

func TestOSHATableG16(t *testing.T) {
	// 29 CFR 1910.95 Table G-16, permissible noise exposures: 8 h 90,
	// 6 h 92, 4 h 95, 3 h 97, 2 h 100, 1.5 h 102, 1 h 105, 0.5 h 110,
	// 0.25 h or less 115 dB(A). The table rounds the Appendix A formula
	// T = 8/2^((L−90)/5): 92 dB gives 6.06 h, 97 gives 3.03 h, 102 gives
	// 1.52 h, so the tolerance is 2 % of the tabulated time.
	tests := []struct{ level, hours float64 }{
		{90, 8}, {92, 6}, {95, 4}, {97, 3}, {100, 2}, {102, 1.5}, {105, 1}, {110, 0.5}, {115, 0.25},
	}
	c := OSHA()
	for _, tc := range tests {
		if got := c.AllowedHours(tc.level); math.Abs(got-tc.hours) > 0.02*tc.hours {
			t.Errorf("OSHA AllowedHours(%g) = %g h, want %g h (G-16)", tc.level, got, tc.hours)
		}
	}
}

func TestOSHATableG16a(t *testing.T) {
	// 29 CFR 1910.95 Appendix A, Table G-16a (reference duration by level):
	// 80 → 32 h, 85 → 16 h, 92 → 6.1 h, 100 → 2 h, 115 → 0.25 h,
	// 130 → 0.031 h. Printed to 2–3 significant digits: tolerance half a
	// unit in the last printed place.
	tests := []struct{ level, hours, tol float64 }{
		{80, 32, 0.05}, {85, 16, 0.05}, {92, 6.1, 0.05}, {100, 2, 0.005},
		{115, 0.25, 0.0005}, {130, 0.031, 0.0005},
	}
	c := OSHA()
	for _, tc := range tests {
		if got := c.AllowedHours(tc.level); math.Abs(got-tc.hours) > tc.tol {
			t.Errorf("OSHA AllowedHours(%g) = %g h, want %g ± %g h (G-16a)", tc.level, got, tc.hours, tc.tol)
		}
	}
}

func TestOSHADoseAndTWA(t *testing.T) {
	// 29 CFR 1910.95 Appendix A: 8 h at 92 dB(A) gives a dose of about
	// 131 %; TWA = 16.61·log10(D/100) + 90. The example divides by the
	// rounded Table G-16a time of 6.1 h where the formula gives 6.06 h, so
	// the exact dose is 132 %: tolerance 1 %.
	c := OSHA()
	d := c.Dose(92, 8)
	if math.Abs(d-131) > 0.01*131 {
		t.Errorf("OSHA dose 8 h at 92 = %g %%, want ≈131", d)
	}
	if got := c.TWA(d); math.Abs(got-92) > 1e-9 {
		t.Errorf("OSHA TWA(%g %%) = %g, want 92", d, got)
	}
	// Appendix A's constant 16.61 is 5/log10(2) = 16.6096 rounded.
	for _, dose := range []float64{50, 100, 131, 200, 400, 800} {
		want := 16.61*math.Log10(dose/100) + 90
		if got := c.TWA(dose); math.Abs(got-want) > 0.01 {
			t.Errorf("OSHA TWA(%g %%) = %g, want %g (Appendix A)", dose, got, want)
		}
	}
	// 29 CFR 1910.95(c): the action level, 85 dB(A) TWA, is a 50 % dose.
	if d := c.Dose(85, 8); math.Abs(d-50) > 1e-9 {
		t.Errorf("OSHA dose 8 h at 85 = %g %%, want 50", d)
	}
}

func TestLEX8h(t *testing.T) {
	// Directive 2003/10/EC, Art. 2(b): LEX,8h is the level normalised to an
	// 8-h day; L + 10·log10(T/8) follows from equal energy (ISO 9612:2009).
	tests := []struct{ level, hours, want float64 }{
		{85, 8, 85},
		{90, 0.8, 80},
		{80, 80.0 / 10, 80},
		{95, 4, 95 + 10*math.Log10(0.5)}, // 91.99
		{100, 24, 100 + 10*math.Log10(3)},
	}
	for _, tc := range tests {
		if got := LEX8h(tc.level, tc.hours); math.Abs(got-tc.want) > 1e-9 {
			t.Errorf("LEX8h(%g, %g) = %g, want %g", tc.level, tc.hours, got, tc.want)
		}
	}
}

func TestReportEU(t *testing.T) {
	// Directive 2003/10/EC, Art. 3: lower action 80, upper action 85,
	// limit 87 dB(A) on LEX,8h.
	tests := []struct {
		level, hours float64
		want         []float64
	}{
		{79.9, 8, nil},
		{80, 8, []float64{80}},
		{84.96, 8, []float64{80, 85}}, // rounds to 85.0 as printed
		{86.9, 8, []float64{80, 85}},
		{87, 8, []float64{80, 85, 87}},
		{90, 1, []float64{80}},     // 80.97
		{100, 0.25, []float64{80}}, // 84.95 prints as 84.9
		{60, 24, nil},
	}
	for _, tc := range tests {
		r, err := NewReport(tc.level, tc.hours)
		if err != nil {
			t.Fatal(err)
		}
		var got []float64
		for _, v := range r.EUReached {
			got = append(got, v.LevelDBA)
		}
		if len(got) != len(tc.want) {
			t.Errorf("%g dB(A) for %g h (LEX %.2f): reached %v, want %v", tc.level, tc.hours, r.LEX8h, got, tc.want)
			continue
		}
		for i := range got {
			if got[i] != tc.want[i] {
				t.Errorf("%g dB(A) for %g h: reached %v, want %v", tc.level, tc.hours, got, tc.want)
			}
		}
	}
}

func TestReportFigures(t *testing.T) {
	r, err := NewReport(94, 2)
	if err != nil {
		t.Fatal(err)
	}
	// NIOSH: 94 dB(A) permits 1 h (NIOSH 98-126), so 2 h is a 200 % dose and
	// a TWA 3 dB over 85.
	if math.Abs(r.NIOSH.AllowedHours-1) > 1e-12 || math.Abs(r.NIOSH.Dose-200) > 1e-9 || math.Abs(r.NIOSH.TWA-88) > 1e-9 {
		t.Errorf("NIOSH %+v", r.NIOSH)
	}
	// OSHA: T(94) = 8/2^0.8 = 4.595 h (29 CFR 1910.95 Appendix A formula).
	if math.Abs(r.OSHA.AllowedHours-8/math.Pow(2, 0.8)) > 1e-12 || math.Abs(r.OSHA.Dose-100*2/(8/math.Pow(2, 0.8))) > 1e-9 {
		t.Errorf("OSHA %+v", r.OSHA)
	}
	if math.Abs(r.LEX8h-(94-10*math.Log10(4))) > 1e-12 {
		t.Errorf("LEX8h = %g", r.LEX8h)
	}
	// Equal energy: the NIOSH TWA (3-dB rule) and LEX,8h (10·log10) differ
	// only by 3 vs 10·log10(2) = 3.0103 dB per doubling.
	if math.Abs(r.NIOSH.TWA-r.LEX8h) > 0.03 {
		t.Errorf("NIOSH TWA %g vs LEX8h %g", r.NIOSH.TWA, r.LEX8h)
	}
}

func TestReportInvalid(t *testing.T) {
	tests := []struct {
		level, hours float64
		want         string
	}{
		{-1, 8, "level"},
		{200.1, 8, "level"},
		{math.NaN(), 8, "level"},
		{math.Inf(1), 8, "level"},
		{85, 0, "hours"},
		{85, -2, "hours"},
		{85, 24.01, "hours"},
		{85, math.NaN(), "hours"},
	}
	for _, tc := range tests {
		_, err := NewReport(tc.level, tc.hours)
		if err == nil {
			t.Errorf("NewReport(%g, %g): no error", tc.level, tc.hours)
			continue
		}
		if !errors.Is(err, ErrInput) || !strings.HasPrefix(err.Error(), "exposure: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("NewReport(%g, %g) = %v, want an ErrInput naming %s", tc.level, tc.hours, err, tc.want)
		}
	}
	for _, ok := range [][2]float64{{0, 24}, {200, 1e-3}, {85, 8}} {
		if _, err := NewReport(ok[0], ok[1]); err != nil {
			t.Errorf("NewReport(%g, %g) = %v", ok[0], ok[1], err)
		}
	}
}

func TestFormat(t *testing.T) {
	r, err := NewReport(97, 1)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := r.Format(&b); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	for _, want := range []string{
		"97.0 dB(A) for 1 h a day",
		"NIOSH REL", "permitted 30 min, dose 200 %, TWA 88.0 dB(A)",
		"OSHA PEL", "permitted 3 h 2 min", // 8/2^1.4 = 3.031 h
		"LEX,8h 88.0 dB(A), reaches the exposure limit value (87 dB(A))",
		Caution,
	} {
		if !strings.Contains(out, want) {
			t.Errorf("Format output lacks %q:\n%s", want, out)
		}
	}
	r, _ = NewReport(70, 8)
	b.Reset()
	_ = r.Format(&b)
	if !strings.Contains(b.String(), "below the lower exposure action value") {
		t.Errorf("quiet report:\n%s", b.String())
	}
	if err := r.Format(failWriter{}); err == nil {
		t.Error("Format swallowed a write error")
	}
}

type failWriter struct{}

func (failWriter) Write([]byte) (int, error) { return 0, errors.New("disk full") }

func TestDuration(t *testing.T) {
	tests := []struct {
		hours float64
		want  string
	}{
		{8, "8 h"}, {1.5, "1 h 30 min"}, {0.25, "15 min"}, {0.5, "30 min"},
		{56.0 / 3600, "56 s"}, {1e-5, "less than 1 s"}, {24, "24 h"}, {32, "more than 24 h"},
		{59.7 / 60, "1 h"}, {59.6 / 3600, "1 min"},
	}
	for _, tc := range tests {
		if got := Duration(tc.hours); got != tc.want {
			t.Errorf("Duration(%g) = %q, want %q", tc.hours, got, tc.want)
		}
	}
}

func TestCaution(t *testing.T) {
	lines := strings.Split(strings.TrimSpace(Caution), "\n")
	if len(lines) < 4 || len(lines) > 6 {
		t.Errorf("Caution has %d lines, want 4–6", len(lines))
	}
	for _, want := range []string{"85 dB(A)", "3 dB", "rotating", "lock-out", "guard", "regulations"} {
		if !strings.Contains(Caution, want) {
			t.Errorf("Caution lacks %q", want)
		}
	}
}

func TestOSHACeilingAndCountedLevels(t *testing.T) {
	// 29 CFR 1910.95 Table G-16 ends at "1/4 or less" hour at 115 dB(A): no
	// exposure above 115 dB(A) is permitted, however short (the mining
	// rule with the same table says so in words: "No exposure shall exceed
	// 115 dBA"). Appendix A's Table G-16a lists reference durations from
	// 80 dB(A) (32 h) to 130 dB(A) (0.031 h), and 1910.95(d)(2)(i) has
	// monitoring integrate levels from 80 to 130 dB(A) (from memory): the
	// dose counts nothing below 80 dB(A).
	tests := []struct {
		level, hours float64
		permitted    float64 // hours; 0: not permitted
		above        bool
		counted      bool
		dose         float64 // percent
		extrapolated bool
	}{
		{115, 0.25, 0.25, false, true, 100, false},
		{115.1, 0.25, 0, true, true, 100 * 0.25 / (8 / math.Exp2(25.1/5)), false},
		{140, 1, 0, true, true, 100 / (8 / math.Exp2(10)), true},
		{130, 0.031, 8 / math.Exp2(8), true, true, 100 * 0.031 / (8 / math.Exp2(8)), false},
		{80, 8, 32, false, true, 25, false},
		{79.9, 8, 8 / math.Exp2(-10.1/5), false, false, 0, false},
		{60, 24, 8 / math.Exp2(-6), false, false, 0, false},
	}
	for _, tc := range tests {
		r, err := NewReport(tc.level, tc.hours)
		if err != nil {
			t.Fatal(err)
		}
		a := r.OSHA
		if tc.above {
			tc.permitted = 0
		}
		if a.AboveCeiling != tc.above || math.Abs(a.AllowedHours-tc.permitted) > 1e-9*math.Max(1, tc.permitted) {
			t.Errorf("OSHA at %g dB(A): permitted %g h (above ceiling %v), want %g h (%v)", tc.level, a.AllowedHours, a.AboveCeiling, tc.permitted, tc.above)
		}
		if a.Counted != tc.counted || math.Abs(a.Dose-tc.dose) > 1e-9*math.Max(1, tc.dose) || a.Extrapolated != tc.extrapolated {
			t.Errorf("OSHA at %g dB(A) for %g h: counted %v, dose %g %%, extrapolated %v; want %v, %g %%, %v",
				tc.level, tc.hours, a.Counted, a.Dose, a.Extrapolated, tc.counted, tc.dose, tc.extrapolated)
		}
		if !tc.counted && !math.IsInf(a.TWA, -1) {
			t.Errorf("OSHA at %g dB(A): TWA %g for an uncounted level", tc.level, a.TWA)
		}
	}
	// NIOSH 98-126 sets no such cut-offs here: 140 dB(A) still has a
	// (sub-second) permitted time, and 70 dB(A) a dose.
	r, _ := NewReport(140, 8)
	if r.NIOSH.AboveCeiling || r.NIOSH.AllowedHours <= 0 {
		t.Errorf("NIOSH at 140 dB(A): %+v", r.NIOSH)
	}
	if r, _ := NewReport(70, 8); !r.NIOSH.Counted || r.NIOSH.Dose <= 0 {
		t.Errorf("NIOSH at 70 dB(A): %+v", r.NIOSH)
	}
}

func TestFormatCeiling(t *testing.T) {
	// 140 dB(A) is above Table G-16's 115 dB(A): the formula's 28 s
	// (8 h / 2^10) must not be printed as an OSHA permitted time.
	r, err := NewReport(140, 8)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := r.Format(&b); err != nil {
		t.Fatal(err)
	}
	out := b.String()
	osha := ""
	for _, line := range strings.Split(out, "\n") {
		if strings.HasPrefix(line, "OSHA PEL") {
			osha = line
		}
	}
	if strings.Contains(osha, "permitted 28 s") || !strings.Contains(osha, "not permitted (no exposure above 115 dB(A))") ||
		!strings.Contains(osha, "extrapolated above 130 dB(A)") {
		t.Errorf("OSHA line at 140 dB(A): %q", osha)
	}
	if !strings.Contains(out, "Table G-16") || !strings.Contains(out, "140 dB peak") {
		t.Errorf("no ceiling note:\n%s", out)
	}
	r, _ = NewReport(75, 8)
	b.Reset()
	_ = r.Format(&b)
	if !strings.Contains(b.String(), "dose 0 % (levels below 80 dB(A) are not counted)") {
		t.Errorf("75 dB(A):\n%s", b.String())
	}
}
