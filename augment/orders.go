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
// energy jointly (a harmonic sum over the orders, each order normalised by
// the energy near it), a median of three frames, linear between frame
// centres. Each order k is then extracted with a second-generation
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
// turning r times faster — and added back.
//
// The work runs at a reduced rate (the signal low-passed above the highest
// moved order and decimated; the change interpolated back), so its cost
// grows with the number of orders only at that rate.
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
	// lies between them.
	D := max(1, int(fs/(2.4*top)))
	var lp []float64
	xl := x
	if D > 1 {
		lp = lowpassKernel(fs, float64(D), fs/float64(D)-2*top)
		xl = decimate(nil, x, lp, D)
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
	M := 0
	if D > 1 {
		M = (len(lp)/2)/D + 2
	}
	rate := trackShaft(xl, fl, f0, lo, hi, trackOrders, g, nl, M)
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
	old := make([]complex128, ne)
	nw := make([]complex128, ne)
	ang := make([]float64, ne)
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
		e := (len(lp)/2 + D - 1) / D
		if nl > 2*e+2*step {
			g.first, g.last = e, nl-e
		}
	}
	lambda := g.lambda(B, fl)
	sys := g.system(lambda)
	env := g.extract(xl, old[M:M+nl], moved, sys)
	K = len(moved)

	// The change at the low rate: Σ_k 2·Re(c_k·(e^{ikrΦ} − e^{ikΦ})).
	d := make([]float64, ne)
	for n := 0; n < ne; n++ {
		m := min(max(n-M, 0), nl-1)
		j, u := g.at(m)
		po, pn := old[n], nw[n]
		qo, qn := complex(1, 0), complex(1, 0)
		var acc float64
		k := 0
		for i, kk := range moved {
			for k < kk {
				qo *= po
				qn *= pn
				k++
			}
			c := env[j*K+i]
			if u != 0 {
				c += complex(u, 0) * (env[(j+1)*K+i] - c)
			}
			acc += 2 * real(c*(qn-qo))
		}
		d[n] = acc
	}
	if D > 1 {
		interpolateAdd(y, d, lp, D, M)
	} else {
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
// ph), interleaved (knot j, order i at j·len(ks) + i): the independent
// Vold–Kalman solution, then backfitSweeps − 1 sweeps that re-fit every
// order to the residual of all of them.
func (g knotGrid) extract(x []float64, ph []complex128, ks []int, sys pentaSystem) []complex128 {
	K := len(ks)
	env := make([]complex128, g.J*K)
	upd := make([]complex128, g.J*K)
	col := make([]complex128, g.J)
	res := make([]float64, len(x))
	copy(res, x)
	for sweep := 0; sweep < backfitSweeps; sweep++ {
		clear(upd)
		g.demodulate(upd, res, ph, ks)
		for i := 0; i < K; i++ {
			for j := range col {
				col[j] = upd[j*K+i]
			}
			sys.solve(col)
			for j, v := range col {
				env[j*K+i] += v
			}
		}
		if sweep == backfitSweeps-1 {
			break
		}
		// the residual: x minus every order as now estimated
		for n := g.first; n < g.last; n++ {
			j, u := g.at(n)
			p := ph[n]
			q := complex(1, 0)
			k := 0
			var acc float64
			e0 := env[j*K : j*K+K]
			var e1 []complex128
			if u != 0 {
				e1 = env[(j+1)*K : (j+1)*K+K]
			}
			for i, kk := range ks {
				for k < kk {
					q *= p
					k++
				}
				c := e0[i]
				if u != 0 {
					c += complex(u, 0) * (e1[i] - c)
				}
				acc += real(c)*real(q) - imag(c)*imag(q)
			}
			res[n] = x[n] - 2*acc
		}
	}
	return env
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

// demodulate adds into out (knot j, order i at j·len(ks) + i) the knot
// sums Pᵀ(x·e^{−ikΦ}) of orders ks, for the phasors e^{iΦ(n)} in ph.
func (g knotGrid) demodulate(out []complex128, x []float64, ph []complex128, ks []int) {
	K := len(ks)
	for n := g.first; n < g.last; n++ {
		v := x[n]
		j, u := g.at(n)
		p := cmplx.Conj(ph[n])
		q := complex(1, 0)
		k := 0
		o0 := out[j*K : j*K+K]
		a, b := v*(1-u), v*u
		if u == 0 {
			for i, kk := range ks {
				for k < kk {
					q *= p
					k++
				}
				o0[i] += complex(a*real(q), a*imag(q))
			}
			continue
		}
		o1 := out[(j+1)*K : (j+1)*K+K]
		for i, kk := range ks {
			for k < kk {
				q *= p
				k++
			}
			o0[i] += complex(a*real(q), a*imag(q))
			o1[i] += complex(b*real(q), b*imag(q))
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
func (g knotGrid) system(lambda float64) pentaSystem {
	J := g.J
	a0 := make([]float64, J)
	a1 := make([]float64, J)
	a2 := make([]float64, J)
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
	s := pentaSystem{d: make([]float64, J), l1: make([]float64, J), l2: make([]float64, J)}
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

// solve overwrites b with the solution of the factored system.
func (s pentaSystem) solve(b []complex128) {
	J := len(b)
	for j := 1; j < J; j++ {
		b[j] -= complex(s.l1[j-1], 0) * b[j-1]
		if j >= 2 {
			b[j] -= complex(s.l2[j-2], 0) * b[j-2]
		}
	}
	for j := 0; j < J; j++ {
		b[j] /= complex(s.d[j], 0)
	}
	for j := J - 2; j >= 0; j-- {
		b[j] -= complex(s.l1[j], 0) * b[j+1]
		if j+2 < J {
			b[j] -= complex(s.l2[j], 0) * b[j+2]
		}
	}
}

// lowpassKernel is a Kaiser-windowed sinc low-pass at fs with its cutoff
// at fs/(2·D) and a transition band of width trans Hz, 90 dB stopband,
// odd length, unit gain at DC.
func lowpassKernel(fs, D, trans float64) []float64 {
	const att = 90
	beta := KaiserBeta(att)
	n := int(math.Ceil((att - 7.95) / (2.285 * 2 * math.Pi * trans / fs)))
	half := n/2 + 1
	h := make([]float64, 2*half+1)
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
// every D-th sample: out[m] is the filtered x at sample m·D.
func decimate(dst, x, h []float64, D int) []float64 {
	nl := (len(x)-1)/D + 1
	out := grow(dst, nl)
	H := len(h) / 2
	L := (len(h) + 7) / 8 * 8
	hp := make([]float64, L)
	copy(hp, h)
	// x with H zeros before it and room after it for every read
	xp := make([]float64, H+(nl+4)*D+L)
	copy(xp[H:], x)
	var acc [4]float64
	m := 0
	for ; m+4 <= nl; m += 4 {
		dsp.Dot4s(&acc, &hp[0], &xp[m*D], D, L)
		copy(out[m:m+4], acc[:])
	}
	for ; m < nl; m++ {
		var a float64
		for i, v := range hp {
			a += v * xp[m*D+i]
		}
		out[m] = a
	}
	return out
}

// interpolateAdd adds to y the low-rate signal d (d[m+M] at sample m·D of
// y) interpolated with the kernel h (gain D, so unit gain in the passband),
// by polyphase: output n takes phase ρ = (n+H) mod D of the kernel.
func interpolateAdd(y, d, h []float64, D, M int) {
	H := len(h) / 2
	T := (len(h) + D - 1) / D
	Tp := (T + 7) / 8 * 8
	sub := make([]float64, D*Tp)
	for rho := 0; rho < D; rho++ {
		for s := 0; s < T; s++ {
			if i := rho + (T-1-s)*D; i < len(h) {
				sub[rho*Tp+s] = h[i] * float64(D)
			}
		}
	}
	// d with P zeros on each side, so every read is inside
	P := Tp + 8
	dp := make([]float64, len(d)+2*P)
	copy(dp[P:], d)
	var acc [4]float64
	for r0 := 0; r0 < D; r0++ {
		rho := (r0 + H) % D
		f := sub[rho*Tp : rho*Tp+Tp]
		for n := r0; n < len(y); n += 4 * D {
			base := (n+H)/D - T + 1 + M + P
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
func trackShaft(xl []float64, fl, f0, lo, hi float64, ks []int, g knotGrid, nl, M int) []float64 {
	out := make([]float64, nl+2*M)
	if hi <= lo {
		for i := range out {
			out[i] = f0
		}
		return out
	}
	ph := make([]complex128, nl)
	ang := make([]float64, nl)
	for n := range ang {
		ang[n] = 2 * math.Pi * f0 * float64(n) / fl
	}
	phasors(ph, ang, 1)
	K := len(ks)
	z := make([]complex128, g.J*K)
	g.demodulate(z, xl, ph, ks)

	fk := fl / float64(g.step)
	L := min(g.J, max(8, int(math.Round(trackFrameSeconds*fk))))
	nF := max(1, int(math.Round(float64(g.J)/float64(L))))
	win := make([]float64, L)
	for j := range win {
		win[j] = 0.5 - 0.5*math.Cos(2*math.Pi*(float64(j)+0.5)/float64(L))
	}
	T := float64(L) / fk
	kmax := float64(ks[len(ks)-1])
	stepHz := 1 / (2 * kmax * T)
	G := int(math.Ceil((hi-lo)/stepHz)) + 1
	stepHz = (hi - lo) / float64(G-1)
	score := make([]float64, G)
	wz := make([]complex128, L)
	centres := make([]float64, nF)
	rates := make([]float64, nF)
	for f := 0; f < nF; f++ {
		start := 0
		if nF > 1 {
			start = int(math.Round(float64(f) * float64(g.J-L) / float64(nF-1)))
		}
		centres[f] = (float64(start) + float64(L-1)/2) * float64(g.step)
		clear(score)
		for i, k := range ks {
			for j := range wz {
				wz[j] = complex(win[j], 0) * z[(start+j)*K+i]
			}
			for q := range score {
				delta := lo + float64(q)*stepHz - f0
				s, c := math.Sincos(-2 * math.Pi * float64(k) * delta / fk)
				rot := complex(c, s)
				p := complex(1, 0)
				var acc complex128
				for _, v := range wz {
					acc += v * p
					p *= rot
				}
				score[q] += cmplx.Abs(acc)
			}
		}
		best := 0
		for q := range score {
			if score[q] > score[best] {
				best = q
			}
		}
		at := float64(best)
		if best > 0 && best < G-1 {
			a, b, c := score[best-1], score[best], score[best+1]
			if den := a - 2*b + c; den < 0 {
				at += 0.5 * (a - c) / den
			}
		}
		rates[f] = math.Min(math.Max(lo+at*stepHz, lo), hi)
	}
	// A median of three frames drops a frame that locked onto something
	// else; the rate is linear between frame centres.
	sm := make([]float64, nF)
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
