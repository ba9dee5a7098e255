package augment

import (
	"math"
	"math/cmplx"
	"slices"

	"thrum/machine/dsp"
)

// OrderSpeed changes the machine's speed by Ratio the way a machine
// changing speed sounds, not the way a faster tape does: the components
// locked to the shaft (orders 1 … Orders of the shaft rate: shaft lines,
// blade pass, low gear mesh) move to Ratio times their frequency; the rest
// (casing and structural resonances, lines locked to the mains, the noise
// floor, the room) stays where it is; the clip keeps its length; and the
// whole clip's level changes by LevelDB (the speed law of the machine's
// kind, see SoundPowerLevelDB).
//
// Method. The shaft rate f(t) is tracked inside ShaftHz × (1 ± BandPercent
// %): per frame of about one second, the rate whose orders carry the most
// energy jointly (a harmonic sum of the frame's spectral magnitudes at
// k·f over the first eight orders whose search band holds no mains
// harmonic), a median of three frames, linear between frame centres. Each order k is then extracted with a second-generation
// Vold–Kalman filter (Vold & Leuridan 1993; Vold, Mains & Blough 1997, from
// memory): the complex envelope c_k(t) minimises
//
//	Σ_n |x(n)·e^{−ikΦ(n)} − c_k(n)|² + λ Σ |∇²c_k|²,   Φ(n) = 2π Σ f/fs,
//
// the data equation plus the structural equation of a second-order
// difference, solved as one banded (pentadiagonal) system per order, O(N).
// The envelope is represented by knots every few milliseconds, linear
// between them, so the system stays small and well conditioned; λ sets the
// −3 dB full bandwidth BandwidthHz around each order. The orders are
// subtracted and resynthesised as 2·Re(c_k(t)·e^{ikrΦ(t)}) — the envelope
// (amplitude and phase relative to the shaft angle) kept, the shaft angle
// turning r times faster — and added back. Each order alone would be
// estimated with the others (and its own mirror image at negative
// frequency) still in the data, which leak through the filter's skirts
// near the clip's ends, where the smoother sees one side only; a second
// sweep re-fits every order to what all of them leave, towards the joint
// solution of the multi-order filter.
//
// The work runs at a reduced rate, 2.4 times the highest moved order's
// frequency (the signal low-passed and decimated, in two stages when the
// factor is 8 or more; the change interpolated back the same way), so its
// cost grows with the number of orders only at that rate. Scratch
// buffers are kept between calls.
//
// Orders whose frequency comes within twice BandwidthHz of a harmonic of
// MainsHz anywhere in the tracked range are left in place (a filter that
// wide would take the mains line with them; at twice the bandwidth it
// passes less than 1 %), and so are orders too close to the Nyquist
// frequency. MainsHz 0 checks no mains harmonics.
//
// Limits: order tracking cannot separate an order from a resonance it
// crosses (the order moves with the resonance's boost it had), nor tones
// that are not locked to the shaft rate but lie within the bandwidth of an
// order, nor orders above Orders (a gear mesh of many teeth stays unless
// Orders covers it); broadband noise is not shaped by speed beyond LevelDB.
type OrderSpeed struct {
	// Ratio is the speed change r (> 0).
	Ratio float64
	// ShaftHz is the nominal shaft rate of x, BandPercent the half-width
	// of the band in which the actual rate is tracked (percent of
	// ShaftHz).
	ShaftHz, BandPercent float64
	// Orders is the highest order moved (default DefaultOrders).
	Orders int
	// BandwidthHz is each order filter's −3 dB full bandwidth (default
	// DefaultOrderBandwidthHz).
	BandwidthHz float64
	// MainsHz is the mains frequency (50 or 60; 0 = none known).
	MainsHz float64
	// LevelDB is the level change applied to the whole clip.
	LevelDB float64
}

// Defaults of OrderSpeed. Sixteen orders cover the shaft lines and the
// blade pass of common fans and pumps; 1 Hz is narrow beside the order
// spacing of any shaft above a few hertz, and wide enough to follow the
// speed drift left after tracking.
const (
	DefaultOrders           = 16
	DefaultOrderBandwidthHz = 1.0
)

// OrderReport says what OrderSpeed did.
type OrderReport struct {
	// ShaftHz is the mean tracked shaft rate of the input.
	ShaftHz float64
	// Moved are the orders moved; KeptMains the orders left in place for
	// a mains harmonic, KeptNyquist those too near the Nyquist frequency.
	Moved, KeptMains, KeptNyquist []int
}

// SoundPowerLevelDB is the level change 10·n·log10(r) dB of a sound power
// that goes with the n-th power of speed.
func SoundPowerLevelDB(exponent, r float64) float64 {
	if exponent == 0 {
		return 0
	}
	return 10 * exponent * math.Log10(r)
}

// Apply implements Transform.
func (o OrderSpeed) Apply(dst, x []float64, fs float64) []float64 {
	y, _ := o.ApplyReport(dst, x, fs)
	return y
}

// ApplyReport is Apply that also reports the tracked rate and which orders
// moved. dst may not alias x. The output has len(x) samples.
func (o OrderSpeed) ApplyReport(dst, x []float64, fs float64) ([]float64, OrderReport) {
	y := grow(dst, len(x))
	copy(y, x)
	var rep OrderReport
	ar := getArena()
	defer putArena(ar)
	K := o.Orders
	if K <= 0 {
		K = DefaultOrders
	}
	B := o.BandwidthHz
	if B <= 0 {
		B = DefaultOrderBandwidthHz
	}
	r := o.Ratio
	f0 := o.ShaftHz
	band := math.Max(o.BandPercent, 0) / 100
	gain := math.Pow(10, o.LevelDB/20)
	if !(r > 0) || !(f0 > 0) || !(fs > 0) || len(x) == 0 {
		scale(y, gain)
		return y, rep
	}
	lo, hi := f0*(1-band), f0*(1+band)
	rmax := math.Max(r, 1)

	// Orders below Nyquist after the change, with room for the filter.
	var orders []int
	for k := 1; k <= K; k++ {
		if float64(k)*hi*rmax+2*B > 0.45*fs {
			rep.KeptNyquist = append(rep.KeptNyquist, k)
			continue
		}
		orders = append(orders, k)
	}
	if len(orders) == 0 {
		rep.ShaftHz = f0
		scale(y, gain)
		return y, rep
	}
	kmax := orders[len(orders)-1]
	top := float64(kmax)*hi*rmax + 2*B
	// The low rate: 2.4 × the highest frequency moved, so what folds
	// back in decimation lands above it; the filter's transition band
	// lies between them. Two stages when the whole factor is 8 or more:
	// by 4 with a wide transition band first, then by the rest, far
	// cheaper than one long filter at fs.
	D := max(1, int(fs/(2.4*top)))
	D1, D2 := 1, D
	if D >= 8 {
		D1 = 4
		D2 = max(1, int(fs/float64(D1)/(2.4*top)))
		D = D1 * D2
	}
	var h1, h2 []float64
	xl := x
	if D1 > 1 {
		h1 = lowpassKernel(ar, fs, float64(D1), fs/float64(D1)-2*top)
		xl = decimate(ar, xl, h1, D1)
	}
	if D2 > 1 {
		fm := fs / float64(D1)
		h2 = lowpassKernel(ar, fm, float64(D2), fm/float64(D2)-2*top)
		xl = decimate(ar, xl, h2, D2)
	}
	// reach of the filters in fine samples, and the mid-rate margin the
	// last interpolation needs beyond the clip's edges
	reach, Mm := len(h1)/2+D1*(len(h2)/2), 0
	if D1 > 1 {
		Mm = (len(h1)/2)/D1 + 2
	}
	fl := fs / float64(D)
	nl := len(xl)

	// Knot spacing: 64 knots per bandwidth, and enough for the widest
	// search band of an order in the tracker.
	knotRate := math.Max(64*B, 4*float64(kmax)*(hi-lo))
	step := max(1, int(fl/knotRate))
	g := newKnotGrid(nl, step)
	if g.J < 3 {
		rep.ShaftHz = f0
		scale(y, gain)
		return y, rep
	}

	// Track the shaft rate with the orders whose search band holds no
	// mains harmonic (all orders when every one does).
	var trackOrders []int
	for _, k := range orders {
		kf := float64(k)
		if !nearMains(kf*lo-B, kf*hi+B, o.MainsHz) {
			trackOrders = append(trackOrders, k)
		}
	}
	if len(trackOrders) == 0 {
		trackOrders = orders
	}
	trackOrders = trackOrders[:min(len(trackOrders), trackMaxOrders)]
	// M extra low-rate samples on each side let the interpolation back
	// to fs see the change beyond the clip's edges.
	M := Mm
	if D2 > 1 {
		M = (Mm+len(h2)/2)/D2 + 2
	}
	rate := trackShaft(ar, xl, fl, f0, lo, hi, trackOrders, nl, M)
	var sum float64
	for n := M; n < M+nl; n++ {
		sum += rate[n]
	}
	rep.ShaftHz = sum / float64(nl)
	fmin, fmax := slices.Min(rate[M:M+nl]), slices.Max(rate[M:M+nl])

	var moved []int
	for _, k := range orders {
		kf := float64(k)
		if nearMains(kf*fmin-2*B, kf*fmax+2*B, o.MainsHz) {
			rep.KeptMains = append(rep.KeptMains, k)
			continue
		}
		moved = append(moved, k)
	}
	rep.Moved = moved
	if len(moved) == 0 || r == 1 {
		scale(y, gain)
		return y, rep
	}

	// Shaft angle Φ (0 at the clip's first sample) over the extended
	// range, and its phasors before and after the change.
	ne := nl + 2*M
	old := ar.complexes(ne)
	nw := ar.complexes(ne)
	ang := ar.floats(ne)
	for n := M + 1; n < ne; n++ {
		ang[n] = ang[n-1] + 2*math.Pi*rate[n-1]/fl
	}
	for n := M - 1; n >= 0; n-- {
		ang[n] = ang[n+1] - 2*math.Pi*rate[n]/fl
	}
	phasors(old, ang, 1)
	phasors(nw, ang, r)

	// Vold–Kalman: the knot sums of each order's demodulated signal,
	// then one banded solve per order (the matrix is the same for all).
	if D > 1 {
		// the first and last low-rate samples saw the clip's edge
		e := (reach + D - 1) / D
		if nl > 2*e+2*step {
			g.first, g.last = e, nl-e
		}
	}
	lambda := g.lambda(B, fl)
	sys := g.system(ar, lambda)
	env := g.extract(ar, xl, old[M:M+nl], moved, sys)

	// The change at the low rate: Σ_k 2·Re(c_k·(e^{ikrΦ} − e^{ikΦ})).
	d := ar.floats(ne)
	q := ar.complexes(ne)
	g.synthesise(d, env, nw, 2, old, -2, moved, M, q, ar.complexes(ne))
	switch {
	case D1 > 1 && D2 > 1:
		ym := ar.floats((len(y)-1)/D1 + 1 + 2*Mm)
		interpolateAdd(ar, ym, d, h2, D2, M, -Mm)
		interpolateAdd(ar, y, ym, h1, D1, Mm, 0)
	case D2 > 1:
		interpolateAdd(ar, y, d, h2, D2, M, 0)
	case D1 > 1:
		interpolateAdd(ar, y, d, h1, D1, M, 0)
	default:
		for n := range y {
			y[n] += d[n]
		}
	}
	scale(y, gain)
	return y, rep
}

// backfitSweeps is how many times the orders are re-estimated from what
// the others leave: each order alone is estimated with the others (and its
// own mirror image at negative frequency) still in the data, which leak
// through the filter's skirts, most near the clip's ends where the
// smoother sees one side only; re-fitting each order to the residual of all
// the others converges to the joint least-squares solution of the
// multi-order filter.
const backfitSweeps = 2

// extract returns the knot envelopes of orders ks of x (phasors e^{iΦ} in
// ph), order by order (order i, knot j at i·J + j): the independent
// Vold–Kalman solution, then backfitSweeps − 1 sweeps that re-fit every
// order to the residual of all of them.
func (g knotGrid) extract(ar *arena, x []float64, ph []complex128, ks []int, sys pentaSystem) []complex128 {
	J := g.J
	env := ar.complexes(J * len(ks))
	upd := ar.complexes(J * len(ks))
	q := ar.complexes(len(x))
	res := ar.floats(len(x))
	copy(res, x)
	for sweep := 0; sweep < backfitSweeps; sweep++ {
		clear(upd)
		g.demodulate(upd, res, ph, ks, q)
		sys.solve(upd, len(ks))
		for j, v := range upd {
			env[j] += v
		}
		if sweep == backfitSweeps-1 {
			break
		}
		// the residual: x minus every order as now estimated
		copy(res, x)
		g.synthesise(res[g.first:g.last], env, ph[g.first:g.last], -2, nil, 0, ks, -g.first, q, nil)
	}
	return env
}

// synthesise adds a·Re(c_k(n)·e^{ikΦ(n)}) over the orders ks to dst, c_k
// the envelope of order i at knots env[i·J …]; dst[n] and ph[n] are at
// sample n − off of the grid (samples outside it take the envelope of the
// nearest end). With ph2 set it adds a2·Re(c_k(n)·e^{ikΦ₂(n)}) in the
// same pass. q and q2 are scratch of len(dst).
func (g knotGrid) synthesise(dst []float64, env, ph []complex128, a float64, ph2 []complex128, a2 float64, ks []int, off int, q, q2 []complex128) {
	J := g.J
	N := len(dst)
	two := ph2 != nil
	q, ph = q[:N], ph[:N]
	for n := range q {
		q[n] = 1
	}
	if two {
		q2, ph2 = q2[:N], ph2[:N]
		for n := range q2 {
			q2[n] = 1
		}
	}
	inv := 1 / float64(g.step)
	k := 0
	for i, kk := range ks {
		// all powers but the last one here, the last in the pass below
		for ; k < kk-1; k++ {
			for n, v := range ph {
				q[n] *= v
			}
			if two {
				for n, v := range ph2 {
					q2[n] *= v
				}
			}
		}
		k = kk
		e := env[i*J : (i+1)*J]
		n := 0
		for n < N {
			m := n - off
			var c0, dc complex128
			n1 := N
			j := 0
			switch {
			case m < 0: // before the grid: the first knot's envelope
				c0, n1 = e[0], min(N, off)
			case m >= g.n: // after it: the envelope at its last sample
				jl, u := g.at(g.n - 1)
				c0 = e[jl]
				if u != 0 {
					c0 += complex(u, 0) * (e[jl+1] - c0)
				}
			default:
				j = m / g.step
				n1 = min(N, min((j+1)*g.step, g.n)+off)
				c0 = e[j]
				if j+1 < J {
					dc = e[j+1] - c0
				}
			}
			u0 := float64(m-j*g.step) * inv
			if m < 0 || m >= g.n {
				u0, dc = 0, 0
			}
			c0r, c0i, dcr, dci := real(c0), imag(c0), real(dc)*inv, imag(dc)*inv
			cr, ci := c0r+u0*real(dc), c0i+u0*imag(dc)
			if !two {
				for ; n < n1; n++ {
					v := q[n] * ph[n]
					q[n] = v
					dst[n] += a * (cr*real(v) - ci*imag(v))
					cr += dcr
					ci += dci
				}
				continue
			}
			for ; n < n1; n++ {
				v := q[n] * ph[n]
				w := q2[n] * ph2[n]
				q[n], q2[n] = v, w
				dst[n] += a*(cr*real(v)-ci*imag(v)) + a2*(cr*real(w)-ci*imag(w))
				cr += dcr
				ci += dci
			}
		}
	}
}

// phasors sets dst[n] = e^{i·a·ang[n]}: exactly every 64 samples, by the
// rotation from each sample's angle step in between (its sine and cosine
// by their Taylor series to the 7th power: the steps here are below 0.2
// rad, where that is exact to double precision).
func phasors(dst []complex128, ang []float64, a float64) {
	for n := range dst {
		if n%64 == 0 {
			s, c := math.Sincos(a * ang[n])
			dst[n] = complex(c, s)
			continue
		}
		d := a * (ang[n] - ang[n-1])
		d2 := d * d
		c := 1 - d2/2*(1-d2/12*(1-d2/30))
		s := d * (1 - d2/6*(1-d2/20*(1-d2/42)))
		dst[n] = dst[n-1] * complex(c, s)
	}
}

// arena hands out the scratch slices of one ApplyReport call from two
// large buffers, zeroed; reset makes the whole buffers free again. The
// buffers are kept between calls (arenas), so a warm call allocates
// little: the collector's work and its pauses of the tight loops would
// otherwise cost about as much as the arithmetic.
type arena struct {
	f      []float64
	c      []complex128
	nf, nc int
	// wf, wc: the sizes the last call wanted in all, so the next one
	// finds them in one buffer each.
	wf, wc int
}

// arenas keeps a few arenas between calls. Not a sync.Pool: that one is
// emptied at every collection, which these large buffers would trigger
// again each time they are made anew.
var arenas = make(chan *arena, 8)

func getArena() *arena {
	select {
	case a := <-arenas:
		a.reset()
		return a
	default:
		return new(arena)
	}
}

func putArena(a *arena) {
	select {
	case arenas <- a:
	default:
	}
}

func (a *arena) reset() {
	if a.wf > len(a.f) {
		a.f = make([]float64, a.wf)
	}
	if a.wc > len(a.c) {
		a.c = make([]complex128, a.wc)
	}
	a.nf, a.nc, a.wf, a.wc = 0, 0, 0, 0
}

func (a *arena) floats(n int) []float64 {
	a.wf += n
	if a.nf+n > len(a.f) {
		return make([]float64, n)
	}
	s := a.f[a.nf : a.nf+n : a.nf+n]
	a.nf += n
	clear(s)
	return s
}

func (a *arena) complexes(n int) []complex128 {
	a.wc += n
	if a.nc+n > len(a.c) {
		return make([]complex128, n)
	}
	s := a.c[a.nc : a.nc+n : a.nc+n]
	a.nc += n
	clear(s)
	return s
}

// nearMains reports whether a harmonic of mains lies in [lo, hi].
func nearMains(lo, hi, mains float64) bool {
	if mains <= 0 {
		return false
	}
	m := math.Ceil(math.Max(lo, 0) / mains)
	if m < 1 {
		m = 1
	}
	return m*mains <= hi
}

// knotGrid places J envelope knots every step samples over n samples:
// sample i lies between knots i/step and i/step + 1, at fraction u.
//
// Samples before first and from last on are left out of the data
// equation (their sums and their weight in PᵀP): they are the ones the
// decimation filter saw only in part.
type knotGrid struct {
	n, step, J  int
	first, last int
}

func newKnotGrid(n, step int) knotGrid {
	return knotGrid{n: n, step: step, J: (n-1+step-1)/step + 1, last: n}
}

func (g knotGrid) at(i int) (j int, u float64) {
	j = i / g.step
	return j, float64(i-j*g.step) / float64(g.step)
}

// lambda is the weight of the structural equation that puts the −3 dB
// points of the envelope's response at ±B/2: for a sinusoid of frequency
// ν on the knot grid the response is S/(S + λ'·(2 sin(πν/fk))⁴), with S the
// interpolation's own response (2 + cos(2πν/fk))/3 and λ' = λ/step.
func (g knotGrid) lambda(B, fl float64) float64 {
	fk := fl / float64(g.step)
	w := 2 * math.Pi * (B / 2) / fk
	s := (2 + math.Cos(w)) / 3
	d := 2 * math.Sin(w/2)
	return float64(g.step) * s * (math.Sqrt2 - 1) / (d * d * d * d)
}

// demodulate adds into out (order i, knot j at i·J + j) the knot sums
// Pᵀ(x·e^{−ikΦ}) of orders ks over samples first … last, for the phasors
// e^{iΦ(n)} in ph; q is scratch of len(x). The orders are taken one at a
// time, each sample's phasor raised by one power of e^{−iΦ} per order, so
// the inner loops have no dependence from one sample to the next.
func (g knotGrid) demodulate(out []complex128, x []float64, ph []complex128, ks []int, q []complex128) {
	J := g.J
	q = q[g.first:g.last]
	p := ph[g.first:g.last]
	for n := range q {
		q[n] = 1
	}
	inv := 1 / float64(g.step)
	k := 0
	for i, kk := range ks {
		// all powers but the last one here, the last in the pass below
		for ; k < kk-1; k++ {
			for n, v := range p {
				q[n] *= cmplx.Conj(v)
			}
		}
		k = kk
		z := out[i*J : (i+1)*J]
		for j := g.first / g.step; j < J; j++ {
			n0 := max(j*g.step, g.first)
			n1 := min(j*g.step+g.step, g.last)
			if n0 >= n1 {
				break
			}
			var ar, ai, br, bi float64
			u := float64(n0-j*g.step) * inv
			qs, ps, xs := q[n0-g.first:n1-g.first], p[n0-g.first:n1-g.first], x[n0:n1]
			for m, v := range xs {
				// q·conj(p)
				qr, qi := real(qs[m]), imag(qs[m])
				pr, pi := real(ps[m]), imag(ps[m])
				cr, ci := qr*pr+qi*pi, qi*pr-qr*pi
				qs[m] = complex(cr, ci)
				b := v * u
				a := v - b
				ar += a * cr
				ai += a * ci
				br += b * cr
				bi += b * ci
				u += inv
			}
			z[j] += complex(ar, ai)
			if j+1 < J {
				z[j+1] += complex(br, bi)
			}
		}
	}
}

// pentaSystem is the factored symmetric pentadiagonal matrix PᵀP + λAᵀA
// (LDLᵀ: d the diagonal of D, l1 and l2 the first and second
// subdiagonals of L).
type pentaSystem struct {
	d, l1, l2 []float64
}

// system builds and factors PᵀP + λ·AᵀA, P the linear interpolation from
// the knots to the samples and A the second-difference matrix.
func (g knotGrid) system(ar *arena, lambda float64) pentaSystem {
	J := g.J
	a0 := ar.floats(J)
	a1 := ar.floats(J)
	a2 := ar.floats(J)
	for i := g.first; i < g.last; i++ {
		j, u := g.at(i)
		a0[j] += (1 - u) * (1 - u)
		if u != 0 {
			a0[j+1] += u * u
			a1[j] += u * (1 - u)
		}
	}
	for r := 0; r+2 < J; r++ {
		// row (1, −2, 1) at r, r+1, r+2
		a0[r] += lambda
		a0[r+1] += 4 * lambda
		a0[r+2] += lambda
		a1[r] += -2 * lambda
		a1[r+1] += -2 * lambda
		a2[r] += lambda
	}
	s := pentaSystem{d: ar.floats(J), l1: ar.floats(J), l2: ar.floats(J)}
	for j := 0; j < J; j++ {
		dj := a0[j]
		if j >= 1 {
			dj -= s.l1[j-1] * s.l1[j-1] * s.d[j-1]
		}
		if j >= 2 {
			dj -= s.l2[j-2] * s.l2[j-2] * s.d[j-2]
		}
		s.d[j] = dj
		if j+1 < J {
			e := a1[j]
			if j >= 1 {
				e -= s.l2[j-1] * s.l1[j-1] * s.d[j-1]
			}
			s.l1[j] = e / dj
		}
		if j+2 < J {
			s.l2[j] = a2[j] / dj
		}
	}
	return s
}

// solve overwrites each of the K columns b[i·J …] with the solution of
// the factored system, the columns in step so their recurrences overlap.
func (s pentaSystem) solve(b []complex128, K int) {
	J := len(s.d)
	for j := 1; j < J; j++ {
		l1 := complex(s.l1[j-1], 0)
		if j >= 2 {
			l2 := complex(s.l2[j-2], 0)
			for i := 0; i < K; i++ {
				b[i*J+j] -= l1*b[i*J+j-1] + l2*b[i*J+j-2]
			}
			continue
		}
		for i := 0; i < K; i++ {
			b[i*J+j] -= l1 * b[i*J+j-1]
		}
	}
	for j := 0; j < J; j++ {
		d := 1 / s.d[j]
		for i := 0; i < K; i++ {
			v := b[i*J+j]
			b[i*J+j] = complex(real(v)*d, imag(v)*d)
		}
	}
	for j := J - 2; j >= 0; j-- {
		l1 := complex(s.l1[j], 0)
		if j+2 < J {
			l2 := complex(s.l2[j], 0)
			for i := 0; i < K; i++ {
				b[i*J+j] -= l1*b[i*J+j+1] + l2*b[i*J+j+2]
			}
			continue
		}
		for i := 0; i < K; i++ {
			b[i*J+j] -= l1 * b[i*J+j+1]
		}
	}
}

// lowpassKernel is a Kaiser-windowed sinc low-pass at fs with its cutoff
// at fs/(2·D) and a transition band of width trans Hz, 90 dB stopband,
// odd length, unit gain at DC.
func lowpassKernel(ar *arena, fs, D, trans float64) []float64 {
	const att = 90
	beta := KaiserBeta(att)
	n := int(math.Ceil((att - 7.95) / (2.285 * 2 * math.Pi * trans / fs)))
	half := n/2 + 1
	h := ar.floats(2*half + 1)
	fc := 1 / (2 * D)
	i0b := besselI0(beta)
	var sum float64
	for i := range h {
		t := float64(i - half)
		u := t / float64(half+1)
		w := besselI0(beta*math.Sqrt(1-u*u)) / i0b
		s := 2 * fc
		if t != 0 {
			s = math.Sin(2*math.Pi*fc*t) / (math.Pi * t)
		}
		h[i] = s * w
		sum += h[i]
	}
	for i := range h {
		h[i] /= sum
	}
	return h
}

// besselI0 is the modified Bessel function of the first kind, order 0,
// by its power series Σ ((x/2)^k / k!)².
func besselI0(x float64) float64 {
	h := x / 2
	sum, term := 1.0, 1.0
	for k := 1; k < 200; k++ {
		term *= h / float64(k)
		t2 := term * term
		sum += t2
		if t2 < sum*1e-17 {
			break
		}
	}
	return sum
}

// decimate low-passes x with the odd-length kernel h (centred) and keeps
// every D-th sample: out[m] is the filtered x at sample m·D, with zeros
// beyond the ends of x.
func decimate(ar *arena, x, h []float64, D int) []float64 {
	nl := (len(x)-1)/D + 1
	out := ar.floats(nl)
	H := len(h) / 2
	L := (len(h) + 7) / 8 * 8
	hp := ar.floats(L)
	copy(hp, h)
	var acc [4]float64
	for m := 0; m < nl; {
		// four outputs at once where their reads lie inside x
		if s := m*D - H; s >= 0 && s+3*D+L <= len(x) && m+4 <= nl {
			dsp.Dot4s(&acc, &hp[0], &x[s], D, L)
			copy(out[m:m+4], acc[:])
			m += 4
			continue
		}
		var a float64
		for i, v := range hp {
			if t := m*D - H + i; t >= 0 && t < len(x) {
				a += v * x[t]
			}
		}
		out[m] = a
		m++
	}
	return out
}

// floorDiv is ⌊a/b⌋ for b > 0.
func floorDiv(a, b int) int {
	if a >= 0 {
		return a / b
	}
	return -((-a + b - 1) / b)
}

// interpolateAdd adds to y (y[n] at fine sample n + o) the low-rate signal
// d (d[m+M] at fine sample m·D) interpolated with the kernel h (gain D, so unit gain in the passband),
// by polyphase: output n takes phase ρ = (n+H) mod D of the kernel.
func interpolateAdd(ar *arena, y, d, h []float64, D, M, o int) {
	H := len(h) / 2
	T := (len(h) + D - 1) / D
	Tp := (T + 7) / 8 * 8
	sub := ar.floats(D * Tp)
	for rho := 0; rho < D; rho++ {
		for s := 0; s < T; s++ {
			if i := rho + (T-1-s)*D; i < len(h) {
				sub[rho*Tp+s] = h[i] * float64(D)
			}
		}
	}
	// d with P zeros on each side, so every read is inside
	P := Tp + 8
	dp := ar.floats(len(d) + 2*P)
	copy(dp[P:], d)
	var acc [4]float64
	for r0 := 0; r0 < D; r0++ {
		rho := ((r0+o+H)%D + D) % D
		f := sub[rho*Tp : rho*Tp+Tp]
		for n := r0; n < len(y); n += 4 * D {
			base := floorDiv(n+o+H, D) - T + 1 + M + P
			if n+3*D < len(y) {
				dsp.Dot4s(&acc, &f[0], &dp[base], 1, Tp)
				y[n] += acc[0]
				y[n+D] += acc[1]
				y[n+2*D] += acc[2]
				y[n+3*D] += acc[3]
				continue
			}
			for q := 0; q < 4 && n+q*D < len(y); q++ {
				var a float64
				for s, v := range f {
					a += v * dp[base+q+s]
				}
				y[n+q*D] += a
			}
		}
	}
}

// knotGain is the gain sinc²(v) of knot sums (triangular weights) at v
// cycles per knot.
func knotGain(v float64) float64 {
	if v == 0 {
		return 1
	}
	x := math.Pi * v
	return (math.Sin(x) / x) * (math.Sin(x) / x)
}

// trackMaxOrders is how many orders (the lowest usable ones) the tracker
// sums: enough to resolve the rate to a small fraction of an order filter's
// bandwidth, while its cost grows with the square of the count.
const trackMaxOrders = 8

// trackFrameSeconds is the tracker's frame length: long enough to resolve
// the orders' lines inside a speed band of a few per cent, short enough to
// follow a drifting speed.
const trackFrameSeconds = 1.0

// trackShaft tracks the shaft rate of xl (rate fl) inside [lo, hi] Hz
// around the nominal f0 from the orders ks, and returns it per low-rate
// sample over the clip extended by M samples on each side (held constant
// beyond the first and last frame centres).
func trackShaft(ar *arena, xl []float64, fl, f0, lo, hi float64, ks []int, nl, M int) []float64 {
	out := ar.floats(nl + 2*M)
	if hi <= lo {
		for i := range out {
			out[i] = f0
		}
		return out
	}
	ph := ar.complexes(nl)
	w := 2 * math.Pi * f0 / fl
	s, c := math.Sincos(w)
	rot := complex(c, s)
	for n := range ph {
		if n%64 == 0 {
			s, c := math.Sincos(w * float64(n))
			ph[n] = complex(c, s)
			continue
		}
		ph[n] = ph[n-1] * rot
	}
	// The tracker's own knots: four per hertz of the widest order's
	// search band, at least 16 per second.
	kmax := float64(ks[len(ks)-1])
	g := newKnotGrid(nl, max(1, int(fl/math.Max(16, 4*kmax*(hi-lo)))))
	z := ar.complexes(g.J * len(ks))
	g.demodulate(z, xl, ph, ks, ar.complexes(nl))

	fk := fl / float64(g.step)
	L := min(g.J, max(8, int(math.Round(trackFrameSeconds*fk))))
	nF := max(1, int(math.Round(float64(g.J)/float64(L))))
	win := ar.floats(L)
	for j := range win {
		win[j] = 0.5 - 0.5*math.Cos(2*math.Pi*(float64(j)+0.5)/float64(L))
	}
	T := float64(L) / fk
	// A coarse grid of two points per half main lobe of the highest
	// order, then two points halfway beside the best and a parabola.
	stepHz := 1 / (kmax * T)
	G := int(math.Ceil((hi-lo)/stepHz)) + 1
	stepHz = (hi - lo) / float64(G-1)
	score := ar.floats(G)
	K := len(ks)
	wz := ar.complexes(K * L)
	centres := ar.floats(nF)
	rates := ar.floats(nF)
	// pair returns the score (Σ over the orders of the frame's DTFT
	// magnitude at k·(f0+δ)) at two offsets δ: two independent chains.
	pair := func(d0, d1 float64) (float64, float64) {
		var s0, s1 float64
		for i, k := range ks {
			kf := float64(k)
			sn0, cs0 := math.Sincos(-2 * math.Pi * kf * d0 / fk)
			sn1, cs1 := math.Sincos(-2 * math.Pi * kf * d1 / fk)
			p0r, p0i, p1r, p1i := 1.0, 0.0, 1.0, 0.0
			var a0r, a0i, a1r, a1i float64
			for _, v := range wz[i*L : (i+1)*L] {
				vr, vi := real(v), imag(v)
				a0r += vr*p0r - vi*p0i
				a0i += vr*p0i + vi*p0r
				a1r += vr*p1r - vi*p1i
				a1i += vr*p1i + vi*p1r
				p0r, p0i = p0r*cs0-p0i*sn0, p0r*sn0+p0i*cs0
				p1r, p1i = p1r*cs1-p1i*sn1, p1r*sn1+p1i*cs1
			}
			// A line at offset ν reaches the knot sums with the linear
			// interpolation's gain sinc²(ν/fk): divided out, so the
			// band's edges are not weighed down.
			s0 += math.Sqrt(a0r*a0r+a0i*a0i) / knotGain(kf*d0/fk)
			s1 += math.Sqrt(a1r*a1r+a1i*a1i) / knotGain(kf*d1/fk)
		}
		return s0, s1
	}
	for f := 0; f < nF; f++ {
		start := 0
		if nF > 1 {
			start = int(math.Round(float64(f) * float64(g.J-L) / float64(nF-1)))
		}
		centres[f] = (float64(start) + float64(L-1)/2) * float64(g.step)
		for i := range ks {
			for j := 0; j < L; j++ {
				wz[i*L+j] = complex(win[j], 0) * z[i*g.J+start+j]
			}
		}
		for q := 0; q < G; q += 2 {
			q1 := min(q+1, G-1)
			score[q], score[q1] = pair(lo+float64(q)*stepHz-f0, lo+float64(q1)*stepHz-f0)
		}
		best := 0
		for q := range score {
			if score[q] > score[best] {
				best = q
			}
		}
		// five points h/2 apart around the best (h the grid step)
		var v [5]float64
		for l := range v {
			v[l] = math.Inf(-1)
		}
		v[2] = score[best]
		if best > 0 {
			v[0] = score[best-1]
		}
		if best < G-1 {
			v[4] = score[best+1]
		}
		at := lo + float64(best)*stepHz
		lft, rgt := math.Max(at-stepHz/2, lo), math.Min(at+stepHz/2, hi)
		v[1], v[3] = pair(lft-f0, rgt-f0)
		b := 2
		for l := range v {
			if v[l] > v[b] {
				b = l
			}
		}
		at += float64(b-2) * stepHz / 2
		if b > 0 && b < 4 && !math.IsInf(v[b-1], -1) && !math.IsInf(v[b+1], -1) {
			if den := v[b-1] - 2*v[b] + v[b+1]; den < 0 {
				at += 0.5 * (v[b-1] - v[b+1]) / den * stepHz / 2
			}
		}
		rates[f] = math.Min(math.Max(at, lo), hi)
	}
	// A median of three frames drops a frame that locked onto something
	// else; the rate is linear between frame centres.
	sm := ar.floats(nF)
	for f := range rates {
		a, b := max(f-1, 0), min(f+1, nF-1)
		w := []float64{rates[a], rates[f], rates[b]}
		slices.Sort(w)
		sm[f] = w[1]
	}
	f := 0
	for i := range out {
		t := float64(i - M)
		for f+1 < nF && centres[f+1] <= t {
			f++
		}
		switch {
		case t <= centres[0]:
			out[i] = sm[0]
		case f+1 >= nF:
			out[i] = sm[nF-1]
		default:
			u := (t - centres[f]) / (centres[f+1] - centres[f])
			out[i] = sm[f] + u*(sm[f+1]-sm[f])
		}
	}
	return out
}
