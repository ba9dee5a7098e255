// Package dsp holds the signal-processing kernels the stages share: fast
// power-of-two Fourier transforms of real and complex sequences, FFT-based
// linear convolution, the four-output dot products of the resampler and
// time-stretcher, and the one detection of CPU features (HasAVX, HasAVX2,
// HasAVX2FMA) that selects their vector assembly. augment, augment/room,
// features and split import it; it imports no other package of the module.
//
// # Transforms
//
// For a real sequence x of length n (a power of two ≥ 2), RealFFT.Forward
// returns the n/2+1 one-sided coefficients
//
//	X[k] = Σ_{t=0}^{n−1} x[t]·e^{−2πikt/n},  k = 0 … n/2,
//
// unnormalised, so a coefficient of a unit-amplitude cosine at bin k
// (0 < k < n/2) has magnitude n/2. RealFFT.Inverse evaluates
//
//	x[t] = Σ_{k=0}^{n−1} X[k]·e^{+2πikt/n}
//
// over the full spectrum rebuilt from X[n−k] = X*[k], so
// Inverse(Forward(x)) = n·x; the imaginary parts of X[0] and X[n/2] are
// ignored. ComplexFFT.Forward and ComplexFFT.Inverse are the same two sums for
// complex sequences of any power-of-two length. RealFFT.PowerSpectrum returns
// |X[k]|² (no scaling, no one-sided doubling) without forming X.
//
// Parseval's relation in this scaling is
//
//	Σ x[t]² = (1/n)·(|X[0]|² + |X[n/2]|² + 2·Σ_{k=1}^{n/2−1} |X[k]|²).
//
// # Method
//
// A real transform of length n is a complex transform of length n/2 on
// z[j] = x[2j] + i·x[2j+1] followed by a split pass. The complex kernel is a
// Stockham autosort FFT (C. Van Loan, Computational Frameworks for the Fast
// Fourier Transform, SIAM 1992) (radix 4, with one radix-8 pass when log2 of the
// length is odd) on precomputed twiddle tables, each twiddle computed
// directly with math.Sincos rather than by recurrence. Plans (RealFFT, ComplexFFT)
// hold scratch space: reuse one per goroutine. With a reused destination
// the transforms do not allocate.
//
// On amd64 with AVX (AVX2 for the split pass of PowerSpectrum) the radix-4
// passes of stride ≥ 2, the first radix-8 pass of a float64 real transform,
// the power split pass and the window product of PowerSpectrumWindowed run
// as vector assembly, two complex values per register. They perform the
// same IEEE operations in the same order as the portable loops (no fused
// multiply-add), so results are bit-identical on every machine; the build
// tag purego selects the portable loops everywhere.
//
// # Convolution
//
// Convolver computes the causal linear convolution y[t] = Σ_k h[k]·x[t−k]
// either cut to the input length (Apply) or in full, len(x)+len(h)−1 samples
// (ApplyFull). It picks, from the lengths alone, a direct sum, one large
// FFT, or overlap-save with a smaller FFT, whichever its cost model rates
// cheapest; the results of the methods agree to rounding. It is safe for
// concurrent use.
//
// # Dot products
//
// Dot4, Dot4s, Dot4p and Dot4s32 compute four dot products at once (four
// filter rows against four windows, or one row against four windows a
// stride apart) for the polyphase resampler and the time-stretcher. With
// AVX2 and FMA they run as assembly that keeps the same lanes, uses the same
// fused multiply-adds and reduces in the same order as the portable loops,
// so again the results do not depend on the machine.
//
// # CPU features
//
// HasAVX, HasAVX2 and HasAVX2FMA are read once at start-up (with OS support
// for the YMM state) and are constant false with the purego build tag or off
// amd64. Every assembly kernel of the module, here and in features, is
// chosen by them; no other file asks the CPU.
//
// Panics are reserved for broken caller contracts: a length that is not a
// power of two, a source whose length does not match the plan, an empty
// kernel. Messages start with "dsp: ".
package dsp
