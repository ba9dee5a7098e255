// Package features turns clips into model inputs: short-time spectra,
// log-mel features, per-clip summary statistics, SpecAugment-style masks for
// training features, train-only normalisation statistics, .npy files and
// PNG pictures. Envelope analysis for bearing diagnostics is EnvelopePlan.
//
// Plans (STFT, Filterbank, LogMel, Summarizer) are built once and reused;
// they hold scratch space and are not safe for concurrent use, so make one
// per worker. Kernels take the destination first; nil (or too short)
// allocates. Samples are float64 in [-1, 1] at a sample rate fs in Hz.
//
// # STFT
//
// Frame i of a signal x of L samples covers x[s .. s+N), s = i·H, where N
// is Config.NFFT (a power of two, default 1024) and H is Config.Hop
// (default N/2). Without centre padding (the default) there are
// 1 + ⌊(L − N)/H⌋ frames (none when L < N). With Config.Center the signal is
// padded by N/2 on both sides, so that frame i is centred on sample i·H, and
// there are 1 + ⌊L/H⌋ frames; the padding is a reflection without repeating
// the edge sample (x[−j] = x[j], as numpy's "reflect"; it folds back and
// forth for clips shorter than N/2) or zeros (Config.Pad).
//
// The window is the periodic Hann window w[n] = ½(1 − cos(2πn/N)),
// n = 0..N−1 (coherent gain 0.5, ENBW 1.5 bins; it sums to exactly 1 at hop
// N/2). The spectrum is the unnormalised DFT X[k] = Σ w[n]·x[s+n]·e^{−2πikn/N},
// k = 0..N/2 (N/2+1 bins of fs/N Hz), reported as the power |X[k]|² or,
// with Config.Magnitude, |X[k]|. Output is row-major frames × bins.
//
// # Mel filterbank
//
// HTK scale (O'Shaughnessy 1987): m = 2595·log10(1 + f/700),
// f = 700·(10^(m/2595) − 1). Slaney scale (Slaney 1998, Auditory Toolbox):
// m = f/(200/3) below 1 kHz (15 mel at 1 kHz) and m = 15 + ln(f/1000)/ln(6.4^(1/27))
// above. Bands+2 edges are equally spaced in mel from mel(FMin) to mel(FMax)
// (default 0 .. fs/2); band b is the triangle on edges (lo, mid, hi) =
// (e[b], e[b+1], e[b+2]) sampled at the bin frequencies f = k·fs/N:
// W = max(0, min((f − lo)/(mid − lo), (hi − f)/(hi − mid))), with unit peak
// (NormPeak, default) or scaled by 2/(hi − lo) for unit area (NormArea,
// Slaney style). Weights are stored sparsely (first bin and run per band).
// Bands narrower than a bin may contain no bin at all and then read 0.
//
// # Log-mel and the dB reference
//
// LogDB (default): L = 10·log10(max(P_mel·4/(Σw)², Floor)) dB, Floor
// default 1e-10 (−100 dB). The factor 4/(Σw)² = 16/N² is the reference:
// the power |X[k]|² = (A·Σw/2)² of the bin on which a sine of amplitude
// A = 1 (full scale), centred on that bin, falls. A band sums the weighted
// power of all its bins, and the Hann main lobe puts a quarter of the
// centre bin's power in each neighbouring bin (|X[k±1]| = |X[k]|/2), so a
// full-scale sine centred on bin k of a band reads
// 10·log10(W(k) + (W(k−1) + W(k+1))/4) dB, W the band's weights: about
// 0 dB in a band one bin wide, rising towards 10·log10(1.5) = +1.76 dB
// (the window's equivalent noise bandwidth, 1.5 bins) in a band many bins
// wide. With the defaults at 16 kHz (n_fft 1024, 128 HTK bands) a
// full-scale sine at 5421.875 Hz, on the peak of band 110 (15 bins wide),
// reads +1.54 dB, one at 1796.875 Hz (band 64) +0.94 dB
// (TestLogMelFullScaleReference). Levels scale as usual: A = 0.1 reads
// 20 dB lower. The unit is therefore "dB re the bin power of a full-scale
// sine", not dBFS of the band. With Config.Magnitude the value is
// 20·log10(max(M_mel·2/Σw, √Floor)), the same reference in magnitude.
// LogNone returns the same normalised mel value without the log.
//
// LogNumpy: log10(P_mel + 1e-10) on the raw unnormalised power, no ×10 and
// no reference. It reproduces the common numpy recipe (periodic Hann, rfft,
// |·|², power @ fb.T, log10(· + 1e-10)); the package tests compare it with
// numpy to 1e-4 log10 units (1e-3 dB).
//
// Logarithms use a table-driven log10 (256-entry reduction table and a
// four-term series, accurate to 1e-12);
// accumulation is float64, output float32. NaN input gives NaN output.
//
// # Masks
//
// MaskSpec follows SpecAugment (Park et al. 2019, Interspeech): on a
// spectrogram of τ frames and ν bands, each of m_F frequency masks has width
// f ~ U{0..F} and start f0 ~ U{0..ν−f−1}, covering bands [f0, f0+f); each of
// m_T time masks has width t ~ U{0..min(T, ⌊p·τ⌋)} and start t0 ~ U{0..τ−t−1}.
// Masked cells take the mean of the array before masking (default) or
// zero. The masked fraction is at most m_F·F/ν + m_T·min(T, pτ)/τ. Masks
// are for training features only; the record lists every span.
//
// # Statistics
//
// Summary: RMS and peak in dBFS re 1 (full-scale square; a full-scale sine
// has RMS −3.01 dBFS), floored at −200 dBFS; crest factor; DC; Pearson
// kurtosis m4/m2² (3 for Gaussian noise); zero-crossing rate; centroid,
// spread, 85 % roll-off and flatness of the mean STFT power spectrum.
//
// Stats: per-band mean and population standard deviation of feature
// frames, accumulated in float64 with Welford's update within a clip and
// the pairwise merge of Chan, Golub & LeVeque (1979) across clips. A Stats value
// names its machine and lists its input files, so that an audit can check
// they were all training files. It is saved as indented JSON. Normalize
// maps x to (x − mean)/std (std below 1e-6 counts as 1).
//
// # .npy layout
//
// Format 1.0: the magic "\x93NUMPY", bytes 1 and 0, a little-endian uint16
// header length, then the dict {'descr': '<f4', 'fortran_order': False,
// 'shape': (F, B), } padded with spaces and ended by '\n' so that the data
// starts at a multiple of 64 bytes, then the float32 values little-endian in
// C (row-major) order. A 1-D shape is written "(n,)". StackWriter streams
// the rows of several clips into one (rows, cols) array: with the row count
// known the header is final at once; otherwise room for a 19-digit count is
// reserved and the header is rewritten on Close. File variants write to a
// temporary name in the same folder and rename on success.
//
// # Pictures
//
// SpectrogramPNG draws panels side by side (time in s, frequency in Hz on a
// mel-spaced or linear axis) with one colour bar in dB spanning
// DynamicRangeDB below the loudest cell; EnvelopePNG plots an envelope
// spectrum and marks named defect lines. Both write atomically.
//
// # Stage and report
//
// RunStage is the features stage of a plant: per clip of the split lists a
// log-mel .npy, its envelope spectrum (band around the machine's resonance
// range, Hilbert envelope, amplitude spectrum up to 1 kHz by default, at
// baseband: EnvelopePlan.BasebandSpectrum), the
// summary statistics in index.csv, masked copies of training clips (logged
// in the machine's ledger), per-machine statistics from training clips
// only, optional stacked arrays and the pictures. WriteReport renders a
// run's summary as one self-contained HTML page with the pictures embedded.
package features
