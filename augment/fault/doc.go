// Package fault synthesises labelled fault-like cues to add to recordings of
// machines in normal operation.
//
// # Rates
//
// Every cue takes the actual rates of the clip it is added to, in Hz: the
// condition's shaft rate times the speed ratio drawn for the clip, and the
// defect or mesh rates that follow from the machine's geometry at that shaft
// rate. A cue never derives a rate from a nominal speed. The label repeats
// the rates exactly as given.
//
// # Use
//
// Build a cue (Bearing, Impact, Orders, GearTooth, or New from a kind name,
// Rates and Params), check it with Validate at the clip's sample rate, and
// call Add to get clip + cue and the cue's Label, or Synthesize for the cue
// alone. Cues are small values; they hold no state between calls.
//
// # Level
//
// SeverityDB is the cue's level relative to the clip:
//
//	SeverityDB = 10·log10(Σ c[i]² / Σ x[i]²)
//
// over the whole clip (c the cue, x the clip, both n samples), so 0 dB adds a
// cue with the clip's own RMS. Add measures the clip and adds the cue; it does
// not limit peaks: a loud impulsive cue can exceed full scale, which the
// caller's clipping guard must catch.
//
// # Bearing defects (kinds outer-race, inner-race, ball, cage)
//
// Following McFadden & Smith (1984) and Randall & Antoni (2011), a localised
// defect is a train of impacts, each ringing a structural resonance at f_n Hz
// with damping ratio ζ:
//
//	c(t) = Σ_k A(t_k)·h(t − t_k),  h(τ) = e^{−ζω_n τ}·sin(ω_d τ) for τ ≥ 0
//	ω_n = 2πf_n,  ω_d = ω_n·√(1 − ζ²)
//
// The impacts repeat at the defect rate f_d = 1/T with slip: each interval is
// T·(1 + σ·ε_k), ε_k standard normal (truncated at ±3) and independent, so
// the train is a renewal process with mean rate f_d and the envelope-spectrum
// lines broaden with the harmonic number, as measured lines do (Randall &
// Antoni report 1–2 % random slip). σ = JitterFrac; 0 gives an exactly
// periodic train t_k = t_0 + k·T. The train starts before the clip so the
// clip opens mid-fault, with t_0 and all phases drawn from the generator.
//
// The impact amplitude A follows the load on the defect, which changes where
// the physics moves the defect through the load zone: a smooth load zone
//
//	A(t) = 1 − (m/2)·(1 − cos(2π f_m t + φ)),  0 < m ≤ 1
//
// (the first harmonic of the Stribeck load distribution McFadden & Smith
// use), with f_m the shaft rate for the inner race (the defect turns with the
// shaft and passes the load zone once per revolution), the cage rate FTF for
// a rolling element (the ball travels with the cage), and A ≡ 1 for the outer
// race (a stationary defect sits in the load zone). Envelope spectra then
// show BPFO and harmonics; BPFI with sidebands ±f_shaft; 2·BSF (a ball spall
// strikes both races once per spin) with sidebands ±FTF.
//
// A cage fault is modelled as a rub: once per cage revolution (rate FTF,
// with the same slip jitter) the cage drags on a ring for a quarter of a
// revolution, with a Hann-shaped contact force. The rub excites the
// resonance with broadband (Gaussian) friction noise under that window, so
// the envelope spectrum shows FTF and its harmonics and the clip shows a
// low-rate, noisy modulation.
//
// The resonance is synthesised exactly at the sample instants: impacts may
// fall between samples, and c[i] = Im z[i] with the complex one-pole
// recursion
//
//	z[i] = z[i−1]·e^{s/fs} + Σ_{t_{i−1} < t_k ≤ t_i} A_k·e^{s(t_i − t_k)},  s = −ζω_n + jω_d
//
// which costs one complex multiply per sample and is exact between samples.
//
// # Impacts (kind impact)
//
// Looseness: transients ringing the resonance, either Count isolated ones at
// uniform random times inside the clip or a train at RateHz with slip
// jitter, each with an amplitude drawn uniformly in [0.5, 1].
//
// # Shaft orders (kinds imbalance, misalignment)
//
//	c(t) = Σ_k g_k·cos(k·θ(t)),  θ(t) = 2π f_shaft t + φ
//
// Imbalance raises the 1× order (g = 1); misalignment raises 2× and 3×
// (g = 0, 1, 0.5). φ is the shaft angle at the clip's start, given or drawn,
// so every order is phase-coherent with the shaft.
//
// # Gear tooth (kind gear-tooth)
//
// A local tooth fault on a gear turning at f_g modulates the mesh once per
// revolution of that gear, while the faulty tooth is in contact:
//
//	c(t) = Σ_h a_h·cos(2π h f_mesh t + φ_h) · (1 + m·p(t))
//
// with p a Hann pulse of PulseTeeth mesh periods repeated at f_g. Its
// spectrum has lines at h·f_mesh ± k·f_g (Randall, Vibration-based Condition
// Monitoring, 2011). Gears do not slip: the pulse train has no jitter.
//
// # References
//
// P. D. McFadden, J. D. Smith, "Model for the vibration produced by a single
// point defect in a rolling element bearing", J. Sound Vib. 96(1), 1984,
// pp. 69–82 (from memory). R. B. Randall, J. Antoni, "Rolling element
// bearing diagnostics — A tutorial", Mech. Syst. Signal Process. 25(2),
// 2011, pp. 485–520. R. B. Randall, Vibration-based Condition Monitoring,
// Wiley, 2011.
//
// # Randomness
//
// Every random draw comes from the *rand.Rand passed in, in a fixed order:
// the same cue, length, rate and generator state give identical samples.
package fault
