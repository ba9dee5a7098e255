// Package exposure turns a steady A-weighted sound level and a time spent in
// it into the occupational noise figures people planning a recording session
// need: permitted time, daily dose, time-weighted average and the European
// exposure values the level reaches.
//
// # Levels
//
// Every level is an A-weighted sound pressure level in dB(A) re 20 µPa,
// taken as steady over the stated time (a slow-response meter reading, or
// an LAeq over the visit). Hours are the time spent at that level in one
// day; the reference day is 8 h.
//
// # Permitted time (exchange-rate criteria)
//
// A criterion has a criterion level Lc for 8 hours and an exchange rate Q:
// every Q dB above Lc halves the permitted time.
//
//	T(L) = 8 h / 2^((L − Lc)/Q)
//
//	NIOSH REL: Lc = 85 dB(A), Q = 3 dB (NIOSH 98-126, 1998)
//	OSHA PEL:  Lc = 90 dB(A), Q = 5 dB (29 CFR 1910.95, Table G-16 and
//	           Appendix A, Table G-16a)
//
// # Dose and TWA
//
// The daily dose is the sum of exposure times over permitted times, in
// percent, D = 100·Σ C_i/T_i; a single level for C hours gives
// D = 100·C/T(L). The time-weighted average is the steady 8-h level giving
// the same dose:
//
//	TWA = Lc + Q/log10(2) · log10(D/100)
//
// which for OSHA is the Appendix A form 16.61·log10(D/100) + 90.
//
// # OSHA ceiling and counted levels
//
// Table G-16 of 29 CFR 1910.95 ends at 115 dB(A) for a quarter of an hour
// or less: above 115 dB(A) no exposure is permitted, however short, and
// the report says "not permitted" instead of a permitted time (a note to
// the table adds that impact or impulsive noise should not exceed 140 dB
// peak sound pressure level; this package judges steady A-weighted levels
// only). The dose counts levels from 80 dB(A), where Appendix A's Table
// G-16a of reference durations starts, to 130 dB(A), where it ends
// (1910.95(d)(2)(i): monitoring integrates every level from 80 to
// 130 dB(A)): below 80 dB(A) the OSHA dose is 0 and there is no TWA; above
// 130 dB(A) the formula is extrapolated and the report says so. The NIOSH
// figures apply the formula at every level.
//
// # European exposure values
//
// Directive 2003/10/EC, Art. 3, sets daily exposure values on the
// 8-h-normalised level
//
//	LEX,8h = L + 10·log10(hours / 8)
//
// lower exposure action value 80 dB(A), upper exposure action value
// 85 dB(A), exposure limit value 87 dB(A) (the limit counts the attenuation
// of hearing protection worn; the action values do not). A value is reached
// when LEX,8h, rounded to 0.1 dB as printed, is at or above it.
//
// These figures are a planning aid. They do not replace a measurement with
// a sound level meter or dosimeter, local regulations or the site's own
// safety rules.
package exposure
