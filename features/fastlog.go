package features

import "math"

// logTableBits is the number of leading mantissa bits that index the
// reduction table of log10Fast.
const logTableBits = 8

// logTable holds, for c = 1 + i/256, the rounded reciprocal 1/c and
// −ln(1/c) of that rounded value. It is filled once at start-up and only
// read afterwards.
var logTable = func() (t [1 << logTableBits][2]float64) {
	for i := range t {
		inv := 1 / (1 + float64(i)/(1<<logTableBits))
		t[i] = [2]float64{inv, -math.Log(inv)}
	}
	return t
}()

// log10Fast returns log10(x) with an absolute error below 1e-12 for
// normal, finite, positive x, and defers to math.Log10 otherwise. With
// x = 2^e·m, m in [1, 2), and c = 1 + ⌊256(m − 1)⌋/256 from the table,
// ln x = e·ln 2 + ln c + ln(1 + r), r = m/c − 1 in [0, 1/256), and
// ln(1 + r) is the Taylor series to r⁴ (truncation below r⁵/5 ≈ 2e-13).
func log10Fast(x float64) float64 {
	bits := math.Float64bits(x)
	exp := int(bits>>52) & 0x7ff
	if exp == 0 || exp == 0x7ff || bits>>63 != 0 {
		return math.Log10(x)
	}
	m := math.Float64frombits(bits&(1<<52-1) | 1023<<52)
	t := &logTable[(bits>>(52-logTableBits))&(1<<logTableBits-1)]
	r := m*t[0] - 1
	p := r - r*r*(0.5-r*(1.0/3-r*0.25))
	return (float64(exp-1023)*math.Ln2 + t[1] + p) * (1 / math.Ln10)
}
