package augment

import (
	"math"
	"math/rand/v2"
	"strconv"
	"strings"

	"thrum/machine"
	"thrum/machine/ledger"
)

// speedStep changes the machine's speed: the clip is resampled by Ratio
// (Speed). Percent is the drawn change. Total is the variant's speed after
// this step: the product of 1 + Percent/100 over the variant's speed steps
// so far, clamped into the condition's band and out of every hold-out band
// (clampSpeed); Ratio is this step's share of it, Total divided by the
// previous speed step's Total (guardSpeedTotals). With one speed step,
// Ratio = Total.
//
// Orders, when set, makes the step order-aware (mode "orders", see
// OrderSpeed): it moves the shaft orders 1 … Orders.Orders of the clip by
// Ratio and keeps the rest and the clip's length; the samples are changed
// by apply itself, not read from a longer source span.
type speedStep struct {
	Percent, Ratio, Total float64
	Orders                *orderSpeedParams
}

// orderSpeedParams are an order-aware speed step's settings and, once
// applied, what it measured and did.
type orderSpeedParams struct {
	// Orders and BandwidthHz are the step's orders and filter bandwidth;
	// Exponent is the machine's sound-power exponent, LevelDB the level
	// change 10·Exponent·log10 Ratio.
	Orders            int
	BandwidthHz       float64
	Exponent, LevelDB float64
	// Measured: the tracked shaft rate and the orders moved and kept.
	applied bool
	report  OrderReport
}

func init() { registerStep("speed", drawSpeed) }

func drawSpeed(s *machine.Step, rng *rand.Rand, dc DrawContext) StepParams {
	pct := uniform(rng, s.Range, s.Increment)
	r := clampSpeed(1+pct/100, dc.Condition, dc.HoldOutBands)
	st := &speedStep{Percent: pct, Ratio: r, Total: r}
	if s.SpeedMode() == machine.SpeedOrders {
		st.Orders = &orderSpeedParams{Orders: s.OrderCount(), BandwidthHz: s.OrderBandwidth()}
		if dc.Machine != nil {
			st.Orders.Exponent = dc.Machine.SpeedLevelExponent()
		}
	}
	return st
}

// guardSpeedTotals sets the applied ratios of a variant's speed steps so
// that the variant's total speed, not only each step alone, stays inside
// the condition's band and out of every hold-out band: after each speed
// step the running product of the drawn ratios 1 + Percent/100 is clamped
// (clampSpeed) into that step's Total, and the step applies Total over the
// previous Total. Draw calls it once all steps are drawn; it draws nothing.
func guardSpeedTotals(drawn []Drawn, dc DrawContext) {
	want, prev := 1.0, 1.0
	for _, d := range drawn {
		p, ok := d.Params.(*speedStep)
		if !ok {
			continue
		}
		want *= 1 + p.Percent/100
		p.Total = clampSpeed(want, dc.Condition, dc.HoldOutBands)
		p.Ratio = p.Total / prev
		prev = p.Total
	}
}

func (p *speedStep) apply(se stepEnv, dst, x []float64) []float64 {
	if o := p.Orders; o != nil {
		// The clip carries the speed of the steps before this one: the
		// shaft is tracked around that rate.
		prev := 1.0
		if p.Ratio > 0 && p.Total > 0 {
			prev = p.Total / p.Ratio
		}
		o.LevelDB = SoundPowerLevelDB(o.Exponent, p.Ratio)
		y, rep := OrderSpeed{Ratio: p.Ratio, ShaftHz: machine.ShaftHz(se.cond.RPM) * prev, BandPercent: se.cond.BandPercent,
			Orders: o.Orders, BandwidthHz: o.BandwidthHz, MainsHz: se.p.MainsHz, LevelDB: o.LevelDB}.ApplyReport(dst, x, se.fs)
		o.applied, o.report = true, rep
		return y
	}
	if se.speedDone {
		return append(dst[:0], x...)
	}
	return Speed{Ratio: p.Ratio, Plans: se.plans}.Apply(dst, x, se.fs)
}

// guard: the variant's speed after the step (Total) must lie in the
// condition's band and outside every hold-out band.
func (p *speedStep) guard(se stepEnv) string {
	reason := ""
	lo, hi := se.cond.SpeedBand()
	if p.Total < lo-1e-12 || p.Total > hi+1e-12 {
		reason = RejectSpeedBand
	}
	for _, b := range se.m.HoldOutBands(se.cond) {
		if rpm := se.cond.RPM * p.Total; rpm >= b[0] && rpm <= b[1] {
			reason = RejectHoldOut
		}
	}
	return reason
}

// Record: percent and ratio; an order-aware step adds its mode, orders,
// bandwidth_hz, power_exponent and level_db, and once applied the tracked
// shaft_hz, the number of orders moved and the orders kept in place (a
// mains harmonic; too near Nyquist).
func (p *speedStep) Record() ledger.StepRecord {
	params := map[string]float64{"percent": p.Percent, "ratio": p.Ratio}
	o := p.Orders
	if o == nil {
		return stepRecord("speed", params, nil)
	}
	params["orders"] = float64(o.Orders)
	params["bandwidth_hz"] = o.BandwidthHz
	params["power_exponent"] = o.Exponent
	params["level_db"] = SoundPowerLevelDB(o.Exponent, p.Ratio)
	text := map[string]string{"mode": machine.SpeedOrders}
	if o.applied {
		params["shaft_hz"] = o.report.ShaftHz
		params["moved"] = float64(len(o.report.Moved))
		if s := orderList(o.report.KeptMains); s != "" {
			text["kept_mains"] = s
		}
		if s := orderList(o.report.KeptNyquist); s != "" {
			text["kept_nyquist"] = s
		}
	}
	return stepRecord("speed", params, text)
}

// orderList writes orders as "2,4,6".
func orderList(ks []int) string {
	var b strings.Builder
	for i, k := range ks {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString(strconv.Itoa(k))
	}
	return b.String()
}

// resamples reports whether the step changes speed by resampling (read
// from a source span), not order by order.
func (p *speedStep) resamples() bool { return p.Orders == nil }

// SpeedRatio is the factor the step multiplies the shaft speed by.
func (p *speedStep) SpeedRatio() float64 { return p.Ratio }

// SpeedDrawn is the factor drawn for the step, before any clamping.
func (p *speedStep) SpeedDrawn() float64 { return 1 + p.Percent/100 }

// SpeedTotal is the variant's speed ratio after this step.
func (p *speedStep) SpeedTotal() float64 { return p.Total }

// clampSpeed keeps a speed ratio inside the condition's band and out of
// every hold-out band: a ratio that would land in a hold-out band is pulled
// back towards 1 until it is just outside.
//
// The result is then rounded towards 1 to a multiple of 0.001: a ratio
// with a small denominator takes the resampler's exact polyphase path, and
// rounding towards 1 never leaves the band nor enters a hold-out band.
func clampSpeed(r float64, c *machine.Condition, holdOut [][2]float64) float64 {
	lo, hi := c.SpeedBand()
	r = math.Min(math.Max(r, lo), hi)
	for _, b := range holdOut {
		rpm := c.RPM * r
		if rpm >= b[0] && rpm <= b[1] {
			if r > 1 {
				r = math.Nextafter(b[0]/c.RPM, 0)
			} else {
				r = math.Nextafter(b[1]/c.RPM, 2)
			}
		}
	}
	return 1 + math.Trunc((r-1)*1000+1e-9*sign(r-1))/1000
}

func sign(x float64) float64 {
	if x < 0 {
		return -1
	}
	return 1
}
