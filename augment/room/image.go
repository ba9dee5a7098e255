package room

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Config controls ImpulseResponse. The zero value is ready to use.
type Config struct {
	// MaxSeconds caps the IR length in seconds. Zero means 10 s: the
	// length follows the room's reverberation time, and 10 s holds a
	// 50 dB decay of RT60 up to 12 s (well above plant halls, which are
	// rarely above 5 s) while bounding memory and convolution cost.
	MaxSeconds float64
	// DecayDB sets the predicted decay at which the IR is cut: the length is
	// the direct-path delay plus the time at which the slowest band's
	// predicted Schroeder curve (see the package documentation) falls by
	// DecayDB, capped by MaxSeconds. Zero means 50 dB: 15 dB below the
	// bottom of the T30 range (ISO 3382-1 asks for 10 dB), and far below
	// audibility under plant noise.
	DecayDB float64
	// MaxImages bounds the number of image sources, estimated before any
	// work as 4π·dmax³/(3V) with dmax = c·(the image part's length); a
	// room that needs more is an error. Zero means 2·10⁷ (about a second
	// of work).
	MaxImages int
	// Specular turns the diffuse tail off: images fill the whole length,
	// as a purely specular room (flat rooms then ring far longer than
	// Eyring; see the package documentation). ImpulseResponse needs no
	// random source then.
	Specular bool
	// MixingSeconds is the time after the direct sound's arrival at which
	// the image part hands over to the diffuse tail. Zero means the room's
	// MixingTime. The join is moved later, if need be, until every
	// first-order reflection lies wholly in the image part.
	MixingSeconds float64
	// BandsPerOctave sets the diffuse tail's band grid. Zero means 3
	// (third octaves).
	BandsPerOctave int
	// HalfWidth is the half length of each arrival's windowed-sinc kernel,
	// in samples (2·HalfWidth taps). Zero means 16.
	HalfWidth int
	// HighPassHz is the cut-off of the second-order Butterworth high-pass
	// applied to the reflected part (not the direct path), which removes the
	// near-DC pedestal that the coherent sum of thousands of same-sign
	// images builds up. Zero means 20 Hz; a negative value disables it.
	HighPassHz float64
}

func (c Config) withDefaults() (Config, error) {
	if c.MaxSeconds < 0 || c.DecayDB < 0 || c.MaxImages < 0 || c.HalfWidth < 0 || c.MixingSeconds < 0 || c.BandsPerOctave < 0 ||
		math.IsNaN(c.MaxSeconds) || math.IsNaN(c.DecayDB) || math.IsInf(c.MaxSeconds, 0) || math.IsInf(c.DecayDB, 0) ||
		math.IsNaN(c.MixingSeconds) || math.IsInf(c.MixingSeconds, 0) {
		return c, fmt.Errorf("room: config %+v: fields must be finite and ≥ 0", c)
	}
	if c.MaxSeconds == 0 {
		c.MaxSeconds = 10
	}
	if c.BandsPerOctave == 0 {
		c.BandsPerOctave = 3
	}
	if c.BandsPerOctave > 24 {
		return c, fmt.Errorf("room: %d bands per octave, at most 24", c.BandsPerOctave)
	}
	if c.DecayDB == 0 {
		c.DecayDB = 50
	}
	if c.MaxImages == 0 {
		c.MaxImages = 20_000_000
	}
	if c.HalfWidth == 0 {
		c.HalfWidth = 16
	}
	if math.IsNaN(c.HighPassHz) || math.IsInf(c.HighPassHz, 0) {
		return c, fmt.Errorf("room: high-pass cut-off %g Hz is not finite", c.HighPassHz)
	}
	if c.HighPassHz == 0 {
		c.HighPassHz = 20
	}
	if c.HalfWidth > 256 {
		return c, fmt.Errorf("room: kernel half width %d > 256 samples", c.HalfWidth)
	}
	return c, nil
}

// Limits checked by ImpulseResponse.
const (
	MinDistance = 0.01     // smallest source–microphone distance, m
	MaxRate     = 384000.0 // highest sampling rate, Hz (bounds the buffer size)
)

// phases is the number of fractional-delay phases in the kernel table; the
// kernel between two phases is interpolated linearly (relative tap error
// below 1e-5).
const phases = 256

// ImpulseResponse returns the impulse response from a point source at src
// to an omnidirectional microphone at mic (metres, strictly inside the
// room), sampled at fs Hz, as sound pressure per unit source strength.
// Up to the join (the mixing time after the direct sound) it is the image
// method (Allen & Berkley 1979): each image contributes gain/(4π·d) at
// delay d/c, placed by a Hann-windowed sinc at its exact arrival time
// (Peterson 1986). After the join it is a diffuse tail: noise drawn from
// rng, decaying per band at the room's reverberation time (RT60At) from
// the energy the image lattice has at the join (Lehmann & Johansson
// 2010). With cfg.Specular the images fill the whole length and rng may be
// nil. See the package documentation for the model and the length rule.
//
// dst is reused when its capacity suffices; nil allocates. The length of the
// result is the IR length. The same inputs and rng state give the same
// samples.
func ImpulseResponse(dst []float64, r Room, src, mic [3]float64, fs float64, cfg Config, rng *rand.Rand) ([]float64, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	cfg, err := cfg.withDefaults()
	if err != nil {
		return nil, err
	}
	if !(fs > 0 && fs <= MaxRate) {
		return nil, fmt.Errorf("room: sampling rate %g Hz, want 0 < fs ≤ %g", fs, MaxRate)
	}
	if cfg.HighPassHz >= fs/2 {
		return nil, fmt.Errorf("room: high-pass cut-off %g Hz at or above Nyquist (%g Hz)", cfg.HighPassHz, fs/2)
	}
	if !r.Inside(src) {
		return nil, fmt.Errorf("room: source %v outside room %v", src, r.Size)
	}
	if !r.Inside(mic) {
		return nil, fmt.Errorf("room: microphone %v outside room %v", mic, r.Size)
	}
	if !cfg.Specular && rng == nil {
		return nil, fmt.Errorf("room: the diffuse tail needs a random source (or Config.Specular)")
	}
	d0 := math.Sqrt(sq(src[0]-mic[0]) + sq(src[1]-mic[1]) + sq(src[2]-mic[2]))
	if d0 < MinDistance {
		return nil, fmt.Errorf("room: source–microphone distance %g m below %g m", d0, MinDistance)
	}
	c := SpeedOfSound(r.TemperatureC)

	// Per-band wall absorption: one broadband band unless Octave is given.
	centres := r.bands()
	var alphas [][6]float64
	if centres == nil {
		alphas = [][6]float64{r.Absorption}
	} else {
		for _, hz := range centres {
			alphas = append(alphas, r.Octave[hz])
		}
	}
	w := cfg.HalfWidth
	var seconds, join float64 // join: start of the tail, s
	var tail []float64        // the tail's band centres
	if cfg.Specular {
		seconds = d0/c + specularDecayTime(r.Size, alphas, c, cfg.DecayDB, cfg.MaxSeconds)
	} else {
		mix := cfg.MixingSeconds
		if mix == 0 {
			mix = r.MixingTime()
		}
		join = math.Max(d0/c+mix, lastFirstOrder(r, src, mic)/c+float64(w+1)/fs)
		tail = tailBands(cfg.BandsPerOctave, fs)
		slowest := 0.0
		for _, f := range tail {
			slowest = math.Max(slowest, r.RT60At(f))
		}
		seconds = join + slowest*cfg.DecayDB/60
	}
	seconds = math.Min(seconds, cfg.MaxSeconds)
	n := int(math.Ceil(seconds * fs))
	tDirect := d0 / c * fs
	if float64(n-w-1) < tDirect {
		return nil, fmt.Errorf("room: IR length %g s ends before the direct path arrives (%g s)", seconds, d0/c)
	}
	// An arrival at sample t writes taps up to floor(t)+w, so keep t < n−w−1.
	dmax := c * float64(n-w-1) / fs
	if !cfg.Specular {
		dmax = math.Min(dmax, c*join)
	}
	if est := 4 * math.Pi * dmax * dmax * dmax / (3 * r.Volume()); est > float64(cfg.MaxImages) {
		return nil, fmt.Errorf("room: %.3g image sources needed for a %.3g s IR, limit %d (lower MaxSeconds or raise MaxImages)",
			est, dmax/c, cfg.MaxImages)
	}

	nb := len(alphas)
	bufs := make([][]float64, nb)
	if nb == 1 {
		dst = resize(dst, n)
		bufs[0] = dst
	} else {
		for b := range bufs {
			bufs[b] = make([]float64, n)
		}
	}
	var axes [3]axis
	for a := range axes {
		axes[a] = newAxis(a, r.Size[a], src[a], mic[a], dmax, alphas)
	}
	table := kernelTable(w)
	accumulate(bufs, &axes, dmax, fs/c, w, table)
	if nb > 1 {
		dst = resize(dst, n)
		combineBands(dst, bufs, centres, fs)
	}
	if start := int(math.Ceil(join * fs)); !cfg.Specular && start < n {
		// Energy per sample of the image part at the join, per band:
		// c/(4π·V·fs) images' worth of squared gain, the lattice's mean
		// squared gain there, times the kernel's energy.
		k := c / (4 * math.Pi * r.Volume() * fs) * kernelEnergy(table, w)
		level := make([]float64, len(tail))
		t60 := make([]float64, len(tail))
		for b, f := range tail {
			level[b] = k * latticeEnergy(r.Size, r.AbsorptionAt(f), c, float64(start)/fs)
			t60[b] = r.RT60At(f)
		}
		addTail(dst, start, tail, level, t60, fs, rng)
	}
	if cfg.HighPassHz > 0 {
		highPass(dst, cfg.HighPassHz, fs)
	}
	// The direct path goes in last, untouched by band filters and high-pass.
	k := make([]float64, 2*w)
	i0 := int(tDirect)
	exactKernel(k, tDirect-float64(i0), w)
	amp := 1 / (4 * math.Pi * d0)
	for j, v := range k {
		if i := i0 - w + 1 + j; i >= 0 && i < n {
			dst[i] += amp * v
		}
	}
	return dst, nil
}

// lastFirstOrder returns the path length of the latest first-order
// reflection, m: the image of src in each of the six walls.
func lastFirstOrder(r Room, src, mic [3]float64) float64 {
	far := 0.0
	for a := 0; a < 3; a++ {
		for _, wall := range []float64{0, r.Size[a]} {
			img := src
			img[a] = 2*wall - src[a]
			far = math.Max(far, math.Sqrt(sq(img[0]-mic[0])+sq(img[1]-mic[1])+sq(img[2]-mic[2])))
		}
	}
	return far
}

// highPass filters x in place with a second-order Butterworth high-pass
// (bilinear transform, Q = 1/√2; Bristow-Johnson, "Audio EQ Cookbook").
func highPass(x []float64, fc, fs float64) {
	w0 := 2 * math.Pi * fc / fs
	cw, alpha := math.Cos(w0), math.Sin(w0)/math.Sqrt2 // sin(w0)/(2Q)
	a0 := 1 + alpha
	b0 := (1 + cw) / 2 / a0
	b1 := -(1 + cw) / a0
	b2 := b0
	a1 := -2 * cw / a0
	a2 := (1 - alpha) / a0
	var s1, s2 float64 // transposed direct form II
	for i, v := range x {
		y := b0*v + s1
		s1 = b1*v - a1*y + s2
		s2 = b2*v - a2*y
		x[i] = y
	}
}

func sq(x float64) float64 { return x * x }

// resize returns dst[:n] zeroed, allocating when the capacity is short.
func resize(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	dst = dst[:n]
	clear(dst)
	return dst
}

// axis holds, for one coordinate axis and each q ∈ {0, 1}, the images
// n = nmin[q]… with coordinate (1−2q)·s + 2nL within dmax of the mic.
type axis struct {
	base  [2]float64 // (1−2q)·s − m
	l2    float64    // 2L
	nmin  [2]int
	delta [2][]float64 // image coordinate − mic coordinate
	order [2][]int     // reflections off the two walls normal to the axis
	gain  [2][]float64 // per image, nb band gains β₀^|n−q|·β_L^|n|
	nb    int
}

func newAxis(a int, l, s, m, dmax float64, alphas [][6]float64) axis {
	ax := axis{l2: 2 * l, nb: len(alphas)}
	for q := 0; q < 2; q++ {
		ax.base[q] = float64(1-2*q)*s - m
		lo := int(math.Ceil((-dmax - ax.base[q]) / ax.l2))
		hi := int(math.Floor((dmax - ax.base[q]) / ax.l2))
		ax.nmin[q] = lo
		for n := lo; n <= hi; n++ {
			k0, kl := abs(n-q), abs(n)
			ax.delta[q] = append(ax.delta[q], ax.base[q]+float64(n)*ax.l2)
			ax.order[q] = append(ax.order[q], k0+kl)
			for _, al := range alphas {
				b0 := math.Sqrt(1 - al[2*a])
				bl := math.Sqrt(1 - al[2*a+1])
				ax.gain[q] = append(ax.gain[q], math.Pow(b0, float64(k0))*math.Pow(bl, float64(kl)))
			}
		}
	}
	return ax
}

// span returns the index range [lo, hi] into the q lists of the images with
// |delta| ≤ radius (empty when lo > hi).
func (ax *axis) span(q int, radius float64) (lo, hi int) {
	lo = int(math.Ceil((-radius-ax.base[q])/ax.l2)) - ax.nmin[q]
	hi = int(math.Floor((radius-ax.base[q])/ax.l2)) - ax.nmin[q]
	lo = max(lo, 0)
	hi = min(hi, len(ax.delta[q])-1)
	return lo, hi
}

func abs(n int) int {
	if n < 0 {
		return -n
	}
	return n
}

// accumulate adds every image within dmax except the source itself (the
// direct path) into bufs (one per band). First-order arrivals get an
// exactly evaluated kernel; the rest interpolate the phase table.
func accumulate(bufs [][]float64, axes *[3]axis, dmax, samplesPerMetre float64, w int, table []float64) {
	nb := len(bufs)
	n := len(bufs[0])
	taps := 2 * w
	k := make([]float64, taps)
	g := make([]float64, nb)
	dmax2 := dmax * dmax
	ax, ay, az := &axes[0], &axes[1], &axes[2]
	const inv4pi = 1 / (4 * math.Pi)
	for qx := 0; qx < 2; qx++ {
		xlo, xhi := ax.span(qx, dmax)
		for ix := xlo; ix <= xhi; ix++ {
			dx := ax.delta[qx][ix]
			rx := dmax2 - dx*dx
			if rx < 0 {
				continue
			}
			ox := ax.order[qx][ix]
			gx := ax.gain[qx][ix*nb : ix*nb+nb]
			for qy := 0; qy < 2; qy++ {
				ylo, yhi := ay.span(qy, math.Sqrt(rx))
				for iy := ylo; iy <= yhi; iy++ {
					dy := ay.delta[qy][iy]
					ry := rx - dy*dy
					if ry < 0 {
						continue
					}
					oxy := ox + ay.order[qy][iy]
					gy := ay.gain[qy][iy*nb : iy*nb+nb]
					dxy2 := dx*dx + dy*dy
					for qz := 0; qz < 2; qz++ {
						zlo, zhi := az.span(qz, math.Sqrt(ry))
						for iz := zlo; iz <= zhi; iz++ {
							dz := az.delta[qz][iz]
							d := math.Sqrt(dxy2 + dz*dz)
							if d > dmax {
								continue
							}
							t := d * samplesPerMetre
							i0 := int(t)
							f := t - float64(i0)
							amp := inv4pi / d
							gz := az.gain[qz][iz*nb : iz*nb+nb]
							start := i0 - w + 1
							inside := start >= 0 && start+taps <= n
							switch oxy + az.order[qz][iz] {
							case 0:
								continue // the direct path is added by the caller
							case 1:
								exactKernel(k, f, w)
							default:
								pf := f * phases
								p := int(pf)
								u := pf - float64(p)
								r0 := table[p*taps : p*taps+taps]
								r1 := table[(p+1)*taps : (p+1)*taps+taps]
								if nb == 1 && inside {
									// Fused interpolation and accumulation.
									g0 := gx[0] * gy[0] * gz[0] * amp
									a, b := g0*(1-u), g0*u
									out := bufs[0][start : start+taps]
									r0 = r0[:len(out)]
									r1 = r1[:len(out)]
									for j := range out {
										out[j] += a*r0[j] + b*r1[j]
									}
									continue
								}
								for j := range k {
									k[j] = r0[j] + u*(r1[j]-r0[j])
								}
							}
							for b := range g {
								g[b] = gx[b] * gy[b] * gz[b] * amp
							}
							if inside {
								for b, buf := range bufs {
									out := buf[start : start+taps]
									kk := k[:len(out)]
									gb := g[b]
									for j, v := range kk {
										out[j] += gb * v
									}
								}
							} else {
								for b, buf := range bufs {
									for j, v := range k {
										if i := start + j; i >= 0 && i < n {
											buf[i] += g[b] * v
										}
									}
								}
							}
						}
					}
				}
			}
		}
	}
}

// exactKernel writes the 2w taps of a Hann-windowed sinc centred at fraction
// f ∈ [0, 1] past tap w−1, i.e. tap j sits at x = j − w + 1 − f, scaled so
// that the taps sum to 1 (unit gain at 0 Hz).
func exactKernel(dst []float64, f float64, w int) {
	sum := 0.0
	for j := range dst {
		x := float64(j-w+1) - f
		v := 0.0
		if math.Abs(x) < float64(w) {
			v = 0.5 * (1 + math.Cos(math.Pi*x/float64(w)))
			if x != 0 {
				v *= math.Sin(math.Pi*x) / (math.Pi * x)
			}
		}
		dst[j] = v
		sum += v
	}
	for j := range dst {
		dst[j] /= sum
	}
}

// kernelTable returns phases+1 rows of exactKernel at f = p/phases.
func kernelTable(w int) []float64 {
	taps := 2 * w
	t := make([]float64, (phases+1)*taps)
	for p := 0; p <= phases; p++ {
		exactKernel(t[p*taps:(p+1)*taps], float64(p)/phases, w)
	}
	return t
}

// specularDecayTime returns the time (s) at which the Schroeder curve
// predicted for the image lattice falls by db, or limit if it does not fall
// that far by then. Along direction u an image c·t away lies behind
// c·t·|u_a|/L_a walls normal to axis a, alternately the two walls of the
// pair, so the energy decays at the rate
//
//	r(u) = c · Σₐ |u_a|·κₐ/Lₐ,  κₐ = −(ln(1−α_a0) + ln(1−α_aL))/2,
//
// and E(t) ∝ ⟨e^(−r(u)·t)⟩ over directions, whose backward integral is
// ⟨e^(−r·t)/r⟩. Its mean rate is Eyring's for uniform walls; the spread of
// r over directions makes the tail slower, which a fixed Eyring or Fitzroy
// length would cut short in flat rooms. The slowest band is used.
func specularDecayTime(size [3]float64, alphas [][6]float64, c, db, limit float64) float64 {
	const n = 32 // midpoint grid per angle on the octant
	var rates []float64
	var weights []float64
	for _, al := range alphas {
		var kappa [3]float64
		for a := range kappa {
			kappa[a] = -(math.Log1p(-al[2*a]) + math.Log1p(-al[2*a+1])) / 2 / size[a]
		}
		for i := 0; i < n; i++ {
			th := (float64(i) + 0.5) * math.Pi / 2 / n
			st, ct := math.Sincos(th)
			for j := 0; j < n; j++ {
				sp, cp := math.Sincos((float64(j) + 0.5) * math.Pi / 2 / n)
				rates = append(rates, c*(st*cp*kappa[0]+st*sp*kappa[1]+ct*kappa[2]))
				weights = append(weights, st)
			}
		}
	}
	target := math.Pow(10, -db/10)
	worst := 0.0
	per := n * n
	for b := range alphas {
		rs, ws := rates[b*per:(b+1)*per], weights[b*per:(b+1)*per]
		edc := func(t float64) float64 {
			var s, s0 float64
			for i, r := range rs {
				s += ws[i] * math.Exp(-r*t) / r
				s0 += ws[i] / r
			}
			return s / s0
		}
		if math.IsNaN(edc(0)) || edc(limit) > target { // a rigid pair, or too slow
			return limit
		}
		lo, hi := 0.0, limit
		for it := 0; it < 50; it++ {
			mid := (lo + hi) / 2
			if edc(mid) > target {
				lo = mid
			} else {
				hi = mid
			}
		}
		worst = math.Max(worst, hi)
	}
	return worst
}
