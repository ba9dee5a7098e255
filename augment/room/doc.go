// Package room simulates the microphone position in a room: an impulse
// response for a rectangular room (image method for the early part, a
// diffuse tail after the mixing time), its decay analysis, and the
// convolution that applies it to a clip.
//
// # Model
//
// A point source at s = (xs, ys, zs) and an omnidirectional microphone at m,
// both strictly inside the box [0, Lx] × [0, Ly] × [0, Lz] (metres), with
// specularly reflecting walls (Allen & Berkley 1979, J. Acoust. Soc. Am.
// 65(4) 943–950). Image sources lie at, per axis,
//
//	x = (1 − 2q)·xs + 2·n·Lx,   q ∈ {0, 1}, n ∈ ℤ
//
// (likewise y, z). Such an image has met the wall x = 0 |n − q| times and
// the wall x = Lx |n| times; with the pressure reflection coefficient
// β = sqrt(1 − α) of each wall (α its energy absorption coefficient) its
// gain is the product of β^count over the six walls. It arrives at
// τ = d/c with amplitude gain/(4π·d), d its distance to the microphone. The
// IR is sound pressure per unit source strength, so the direct path is
// exactly 1/(4π·d) at d/c; scale the result (or use UnitEnergy) as needed.
//
// Speed of sound: c = 331.3·sqrt(1 + T/273.15) m/s for air at T °C
// (343.2 m/s at 20 °C). Room.TemperatureC is used as given: its zero value is
// 0 °C.
//
// # Fractional delays
//
// Each arrival is a Hann-windowed sinc centred at its exact arrival time
// τ·fs (Peterson 1986, J. Acoust. Soc. Am. 80(5) 1527–1529): 2·HalfWidth
// taps (32 by default) with tap x samples from the centre equal to
// ½(1 + cos(πx/W))·sin(πx)/(πx), normalised to sum to 1 so that the 0 Hz
// gain of every arrival is its amplitude. The direct path and the six
// first-order images are evaluated exactly; the others interpolate linearly
// between 257 precomputed phases (tap error < 1e-5). At a half-sample delay
// such a kernel has zero gain at fs/2, so the band-limited peak of an
// arrival is up to ~4 % below its amplitude; at an integer delay the kernel
// is a unit impulse. Taps that would fall before t = 0 are dropped.
//
// The coherent sum of many same-sign images builds a slowly varying
// positive pedestal (the room's 0 Hz pressurisation). Real recordings carry
// no such component, and it distorts the Schroeder curve, so the reflected
// part (not the direct path) is high-passed by a second-order Butterworth
// filter at Config.HighPassHz (20 Hz by default; negative disables it).
//
// # Octave-band absorption
//
// When Room.Octave gives α per wall for some of the bands 125…4000 Hz, one
// pass over the images accumulates one IR per band (same delays, the band's
// gains). The band IRs are combined by zero-phase FFT filters whose
// responses are complementary crossovers in log frequency between
// neighbouring given centres cᵢ < cᵢ₊₁: with v = log2(f/cᵢ)/log2(cᵢ₊₁/cᵢ),
// band i has weight cos²(πv/2) and band i+1 sin²(πv/2); the lowest band
// extends to 0 Hz and the highest to fs/2. The weights sum to 1, so equal
// bands reproduce the broadband IR and the direct path (the same in every
// band) is exact. Being zero-phase, the filters can spread a reflection a
// few milliseconds before its arrival. Without Room.Octave the walls are
// frequency independent.
//
// # Diffuse tail (hybrid model)
//
// Purely specular images decay too slowly in the flat rooms plants are
// (grazing paths along the long axes meet few walls: T30 ≈ 1.6 × Eyring
// for 10 × 8 × 3 m, 2.6–2.8 × for 20 × 10 × 3 m), because real walls and
// machinery scatter. So, as in the hybrid of Lehmann & Johansson
// ("Diffuse reverberation model for efficient image-source simulation of
// room impulse responses", IEEE Trans. Audio, Speech, Lang. Process.
// 18(6), 2010), the images make the IR only up to the join, the mixing time
// after the direct sound (Room.MixingTime: 20·V/S ms + 12 ms, the
// mean-free-path predictor of Lindau, Kosanke & Weinzierl 2012, J. Audio
// Eng. Soc. 60(11); moved later if need be until every first-order
// reflection lies before it), and a diffuse tail takes over:
//
//   - Gaussian noise drawn from the caller's random source (the same source
//     state gives the same IR), split into bands on a fractional-octave
//     grid (Config.BandsPerOctave, third octaves by default, from 25 Hz to
//     fs/2) by the complementary crossovers above;
//   - each band multiplied by an exponential envelope falling 60 dB in the
//     band's RT60 (Room.RT60At): the measured Room.RT60 interpolated in log
//     frequency when given, otherwise Eyring's time for the walls' α at the
//     band centre (Room.AbsorptionAt interpolates the octave values in log
//     frequency, so no two-slope decay arises between far-apart octaves);
//   - the envelope starting at the energy the image lattice carries at the
//     join, per sample c/(4π·V·fs) · ⟨e^(−r(u)·t)⟩ · the kernel's mean
//     energy (the image density 1/V times the mean squared image gain),
//     so the energy is continuous at the join.
//
// The bands filter the stationary noise before the envelopes are applied,
// so nothing reaches before the join, and equal envelopes sum back to the
// noise itself. The tail then decays at Eyring's rate (T30 within a few per
// cent) and with one slope (T30 ≈ EDT) in every band. Config.Specular turns
// the tail off (images over the whole length, the model before).
//
// Limits: the tail is diffuse and isotropic by construction, with no room
// modes (below the Schroeder frequency 2000·sqrt(T/V) Hz a real room
// rings at its modes; the image part keeps them only up to the join); the
// early part is still specular (no scattering there); air absorption is
// not modelled; the Eyring time is a diffuse-field prediction, which
// measured halls with very uneven absorption (an absorbent ceiling over
// hard walls) can miss: give the measured rt60 then.
//
// # Length and cost
//
// The IR ends where the slowest band's tail has fallen by Config.DecayDB
// (50 dB by default) after the join, so its length follows the room's
// reverberation time: a hall of RT60 5 s gets about 4.2 s. Config.MaxSeconds
// caps it (10 s by default, a 50 dB decay of RT60 12 s, far above plant
// halls; memory and convolution cost grow with it). Only images within
// c·(join) of the microphone are visited, so a large hall costs a few
// thousand images instead of millions, plus one FFT per tail band.
//
// With Config.Specular the IR is cut where the Schroeder curve predicted
// for the image lattice has fallen by DecayDB: in direction u an image c·t
// away lies behind c·t·|u_a|/L_a walls normal to each axis a, so the energy
// decays at r(u) = c·Σₐ |u_a|·κₐ/Lₐ with κₐ the mean −ln(1 − α) of the pair,
// and E(t) ∝ ⟨e^(−r(u)·t)⟩ over directions. Its initial rate is Eyring's
// for uniform walls, but the spread of r(u) makes the tail slower,
// markedly so in flat rooms (for 10 × 8 × 3 m the simulated T30 is about
// 1.6 × Eyring, for a cube about 1.1 ×). Images are counted as
// 4π·(c·length)³/(3V) and checked against Config.MaxImages before any
// work; each is added straight into the output buffer.
//
// # Decay analysis
//
// EDC is Schroeder's backward integral (Schroeder 1965), in dB re the total
// energy of the IR. DecayTime fits a least-squares line to the EDC between
// two levels, counted from the onset (the first sample within 20 dB of the
// peak energy, as ISO 3382-1 takes time zero at the direct sound), and
// extrapolates it to 60 dB: T20 uses −5…−25 dB, T30 −5…−35 dB, EDT 0…−10 dB
// (ISO 3382-1:2009). It fails unless the IR ends at least 10 dB (along the
// fitted line) below the range. Sabine, Eyring and Fitzroy give the
// classical predictions from the broadband Absorption (Room.Band selects a
// band).
//
// # Plausibility guard
//
// A variant's reverberation is credible when T30 of its IR lies within the
// room's declared RT60 range. The inputs are the IR, its sampling rate,
// and that range; with the diffuse tail the broadband T30 follows Eyring
// of the room (or the measured rt60), so a range set around a measured
// hall's RT60 accepts its variants.
//
// # Not modelled
//
// Source and microphone directivity, scattering in the early part, room
// modes in the tail, absorption by the air (ISO 9613-1 gives 4.66 dB/km at 1 kHz, 20 °C, 50 % RH, i.e.
// 1.6 dB per second of decay against 60 dB per RT60 from the walls: a few
// per cent of T at 1 kHz, more at 4 kHz and above), wall impedance phase,
// and anything but a rectangular room.
//
// # Convolution
//
// Reverb applies an IR by causal FFT convolution (package thrum/machine/dsp),
// cut to the length of the input; NewReverb builds the convolver once, which
// caches the IR spectrum, and the result is safe for concurrent use.
package room
