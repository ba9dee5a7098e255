package machine

// FeaturesFor returns the feature settings of a machine: the plant's, with
// every key the machine sets replacing the plant's value.
func (p *Plant) FeaturesFor(m *Machine) FeatureConfig {
	var c FeatureConfig
	if p.Features != nil {
		c = *p.Features
	}
	o := m.Features
	if o == nil {
		return c
	}
	setI := func(d *int, s int) {
		if s != 0 {
			*d = s
		}
	}
	setF := func(d *float64, s float64) {
		if s != 0 {
			*d = s
		}
	}
	setS := func(d *string, s string) {
		if s != "" {
			*d = s
		}
	}
	setI(&c.NFFT, o.NFFT)
	setI(&c.Hop, o.Hop)
	setI(&c.Bands, o.Bands)
	setS(&c.Scale, o.Scale)
	setS(&c.Norm, o.Norm)
	setF(&c.FMin, o.FMin)
	setF(&c.FMax, o.FMax)
	setF(&c.EnvelopeMaxHz, o.EnvelopeMaxHz)
	setS(&c.MaskValue, o.MaskValue)
	if o.EnvelopeHz != nil {
		c.EnvelopeHz = o.EnvelopeHz
	}
	for _, pr := range []struct{ d, s **int }{{&c.MaskCopies, &o.MaskCopies}, {&c.MaskF, &o.MaskF}, {&c.MaskMF, &o.MaskMF}, {&c.MaskT, &o.MaskT}, {&c.MaskMT, &o.MaskMT}} {
		if *pr.s != nil {
			*pr.d = *pr.s
		}
	}
	if o.MaskP != nil {
		c.MaskP = o.MaskP
	}
	for _, pr := range []struct{ d, s **bool }{{&c.Center, &o.Center}, {&c.Stack, &o.Stack}, {&c.Pictures, &o.Pictures}} {
		if *pr.s != nil {
			*pr.d = *pr.s
		}
	}
	return c
}

func (v *validator) features(loc, key string, c *FeatureConfig, fs float64) {
	if c == nil {
		return
	}
	if c.NFFT != 0 && (c.NFFT < 64 || c.NFFT > 65536 || c.NFFT&(c.NFFT-1) != 0) {
		v.bad(loc, key+".n_fft", "n_fft", "%d is not a power of two in 64 … 65536", c.NFFT)
	}
	if c.Hop < 0 || (c.NFFT > 0 && c.Hop > c.NFFT) {
		v.bad(loc, key+".hop", "hop", "%d must be in 1 … n_fft", c.Hop)
	}
	if c.Bands < 0 || c.Bands > 512 {
		v.bad(loc, key+".bands", "bands", "%d is outside 1 … 512", c.Bands)
	}
	switch c.Scale {
	case "", "htk", "slaney":
	default:
		v.bad(loc, key+".scale", "scale", "%q is not one of htk, slaney", c.Scale)
	}
	switch c.Norm {
	case "", "peak", "area":
	default:
		v.bad(loc, key+".norm", "norm", "%q is not one of peak, area", c.Norm)
	}
	v.rangeCheck(loc, key+".fmin", "fmin", c.FMin, 0, fs/2, "Hz")
	v.rangeCheck(loc, key+".fmax", "fmax", c.FMax, 0, fs/2, "Hz")
	if c.FMax != 0 && c.FMin >= c.FMax {
		v.bad(loc, key+".fmin", "fmin", "fmin %g Hz must be below fmax %g Hz", c.FMin, c.FMax)
	}
	if c.EnvelopeHz != nil {
		v.pair(loc, key+".envelope_hz", "envelope_hz", c.EnvelopeHz, 1, fs/2, "Hz")
	}
	v.rangeCheck(loc, key+".envelope_max_hz", "envelope_max_hz", c.EnvelopeMaxHz, 0, fs/2, "Hz")
	for _, x := range []struct {
		n  string
		p  *int
		hi float64
	}{{"mask_copies", c.MaskCopies, 20}, {"mask_f", c.MaskF, 512}, {"mask_m_f", c.MaskMF, 10}, {"mask_t", c.MaskT, 100000}, {"mask_m_t", c.MaskMT, 10}} {
		if x.p != nil {
			v.rangeCheck(loc, key+"."+x.n, x.n, float64(*x.p), 0, x.hi, "")
		}
	}
	if c.MaskP != nil {
		v.rangeCheck(loc, key+".mask_p", "mask_p", *c.MaskP, 0, 1, "")
	}
	switch c.MaskValue {
	case "", "mean", "zero":
	default:
		v.bad(loc, key+".mask_value", "mask_value", "%q is not one of mean, zero", c.MaskValue)
	}
}
