// Package augment holds the augmentation transforms, pure DSP on mono
// float64 samples in full-scale units (±1) at a sample rate fs in Hz, and
// the recipe and stage driver that apply them.
//
// Every transform is a small value struct with one method,
//
//	Apply(dst, x []float64, fs float64) []float64
//
// writing into dst (nil or too short allocates; reuse its capacity to avoid
// allocation) and returning it. dst may not alias x unless the type says
// so. No transform clips: levels beyond full scale are dealt with once, at
// the end, by Protect.
//
// # Speed
//
// Speed{Ratio: r} plays the clip r times faster: bandlimited resampling, so
// every tonal line (shaft orders, blade-pass, gear-mesh, bearing tones)
// moves by exactly r and the duration by 1/r. Output sample m is the
// bandlimited reconstruction of x at input position m·r; the output has
// round(len(x)/r) samples, and samples outside x count as zero.
//
// The kernel is a Kaiser-windowed sinc (Kaiser 1974) with β and length from
// Oppenheim & Schafer (Discrete-Time Signal Processing, Eqs. 7.62–7.63),
// designed for 86 dB: cutoff midway between 0.9 and 1.0 of the lower
// Nyquist frequency min(fs, fs/r)/2 (for r > 1 the cutoff and gain scale
// by 1/r). Measured: passband flat within ±0.001 dB up to 0.9 of that
// Nyquist frequency; anything that would alias (or image, for r < 1) at
// least 83 dB down. A Resampler plan holds the polyphase table: exact
// phases when r = p/q with q ≤ 1000 (1.03 = 103/100 has 100 phases), else
// 256 phases with linear interpolation between neighbouring phases. Plans
// are read-only and may be shared; Plans caches them by ratio. Exact-phase
// plans compute in float32 (coefficients and input rounded to float32,
// products and sums rounded separately): measured error about −140 dB re
// the signal, below one step of 24-bit PCM at usual levels, for about 1.5×
// the float64 speed; interpolated plans compute in float64 with fused
// multiply-adds. The dot products use AVX2 where present and a portable
// version that rounds identically, so outputs are bit-identical on every
// machine.
//
// OrderSpeed{Ratio: r, ShaftHz, BandPercent, …} is the order-aware speed
// change: only the shaft orders move by r (tracked and extracted with
// Vold–Kalman filters, resynthesised at r times the shaft angle); the
// resonances, the mains-locked lines, the floor and the clip's length stay,
// and the level changes by the machine's speed law (SoundPowerLevelDB). Its
// doc comment gives the method and the limits.
//
// # Level, polarity, time
//
// Gain{DB} multiplies by 10^(DB/20). Invert{} negates. Shift{Seconds,
// Circular} delays by round(Seconds·fs) samples (negative advances),
// rotating the clip when Circular, filling with zeros otherwise.
//
// # Filters
//
// RBJ biquads (R. Bristow-Johnson, Audio EQ Cookbook): w0 = 2π·f0/fs,
// α = sin(w0)/(2Q), low-pass, high-pass and the constant 0 dB peak
// band-pass, normalised by a0 and run in Direct Form I. Butterworth
// cascades of order N (Butterworth 1930) are the bilinear transform,
// prewarped at the cutoff, of the analog prototype: pole pairs with
// Q_k = 1/(2·sin((2k−1)π/(2N))) and one real pole for odd N; the response
// is −3.0103 dB at the cutoff for every order. A band-pass of order 0 is
// one constant-0-dB-peak biquad with its −3 dB points exactly at Low and
// High (both edges prewarped); of order N it is a high-pass at Low followed
// by a low-pass at High. The "telephone" preset
// is a 300–3400 Hz band-pass (ITU-T P.310), fourth order at each edge.
//
// # Power, SNR and weighting
//
// Power is the long-term mean square over the whole segment,
// P = (1/N)·Σ x[n]², optionally after A-weighting. The SNR of a mix is
//
//	SNR_dB = 10·log10(Ps/Pn)
//
// with Ps the power of the clean signal and Pn the power of the added
// component, both over the mixing segment (the clip) and with the same
// weighting. To mix noise n at a target SNR the noise is scaled by
//
//	g = √(Ps / (Pn·10^(SNR/10)))
//
// so re-measuring s + g·n gives the target (to rounding).
//
// A-weighting follows IEC 61672-1:2013 Annex E:
//
//	A(f) = 20·log10(f4²·f⁴ / ((f²+f1²)·√((f²+f2²)(f²+f3²))·(f²+f4²))) − A1000
//
// with f1 = 20.60, f2 = 107.7, f3 = 737.9, f4 = 12194 Hz and A1000 =
// −2.000 dB (AWeightDB). The digital filter is the bilinear transform of
// the high-pass part (poles f1, f1, f2, f3, each prewarped) followed by a
// 13-tap linear-phase correction FIR fitted by least squares to the rest of
// A(f) over 0…fs/2, normalised to A(1000) at 1 kHz. It stays within the
// class 1 acceptance limits of IEC 61672-1:2013 Table 3 at every table
// frequency up to 0.45·fs for fs from 8 to 96 kHz (within 0.05 dB of A(f)
// at 16 and 48 kHz). Before measuring, the filter is primed with the first
// 0.2 s of the segment in reverse, so the start-up transient of the 20 Hz
// poles does not enter the measurement.
//
// # Noise and background
//
// Noise{Colour, SNR, Weighting, Rand} adds white (flat PSD), pink (1/f,
// −3.0103 dB/octave, shaped in the frequency domain) or brown (1/f²,
// −6.0206 dB/octave, leaky integrator with a 2 Hz corner, mean removed)
// Gaussian noise at SNR dB. Background{Source, SNR, Weighting, Offset,
// CrossfadeSeconds} mixes a background recording, read from Offset and
// looped with an equal-power crossfade when it is shorter than the clip.
// SynthPlantNoise makes a plausible plant floor when there is no
// recording: pink broadband, a white floor, 50/100/150 Hz hum and a slow
// amplitude wander. A silent clip is returned unchanged.
//
// # Clip protection
//
// Protect(x) scales a finished variant in place so its peak is at most
// Ceiling = 0.999 of full scale and returns the factor (1 when it already
// fits) for the ledger. The whole variant is scaled, so every SNR inside it
// is kept.
//
// # Non-physical transforms
//
// Tempo{Factor} (WSOLA time stretch, lines kept, duration /Factor) and
// Pitch{Cents} (Tempo by 1/r then Speed by r, r = 2^(Cents/1200), duration
// kept) are NON-PHYSICAL: a machine that changes speed moves its lines and
// its event rates together, and these transforms move only one of them.
// Nonphysical reports them; a recipe must allow them explicitly.
package augment
