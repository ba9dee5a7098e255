// Package neardup finds near-duplicate audio: copies of a recording that
// went through gain, a time shift, added noise or a small speed change, so
// that no byte comparison or ledger reveals them. split's audit uses it for
// the rule no-near-duplicate-across-splits; it knows nothing of splits.
//
// # Use
//
//	fp := neardup.NewFingerprinter(fs)          // one per goroutine
//	ix := neardup.NewIndex()
//	ix.Add("train/a.wav", fp.Print(neardup.Print{}, a))
//	ms := ix.Query(fp.Print(neardup.Print{}, q)) // matches, best first
//
// Search does the same for files: it loads training and eval files on a
// bounded pool of workers (thrum/machine/pool), resamples every clip to
// CommonRate (8 kHz, with the band-limited resampler of thrum/augment), so
// that a copy at another sample rate prints like its original, prints it,
// indexes the training prints and queries every eval print, one Searcher
// per worker. Its result does not depend on the worker count.
//
// # Fingerprint
//
// The print follows J. Haitsma & T. Kalker (2002), "A highly robust audio
// fingerprinting system", Proc. ISMIR (from memory): 32 bits per frame from the signs of
// time-and-frequency differences of band energies,
//
//	F(t,m) = 1  if  [E(t+L,m) − E(t+L,m+1)] − [E(t,m) − E(t,m+1)] > 0,
//
// with these parameters: frames of 2^⌈log2(0.03·fs)⌉ samples (512 at
// 16 kHz), periodic Hann window, hop half a frame (16 ms); 33
// half-overlapping triangular bands on the mel scale (2595·log10(1 + f/700))
// from 300 Hz to min(6 kHz, 0.45 fs), so that a speed change of a few per
// cent, which moves every component by that fraction, shifts energy
// smoothly between neighbouring bands rather than across a hard band edge;
// E smoothed over 32 frames (~0.5 s) with Hann weights; lag L = 4 frames.
// The smoothing replaces Haitsma & Kalker's long overlapping frames at a
// fraction of the FFT cost. Silent stretches take no part: a short frame
// whose band energy is below −60 dB re the clip's median frame (or exactly
// zero, as a zero-padded tail) is silent, and every word whose smoothed
// energies reach into a silent frame is dead (Print.Dead); dead words are
// never keys of the index and never compared, so the padded halves of two
// unrelated clips do not match. Why this method: distinct recordings of one
// machine share its harmonic lines and long-term spectrum; the double
// difference cancels everything steady (lines, spectrum shape, gain), so the
// bits follow the slow fluctuations of that recording's noise and impacts,
// which differ between recordings. Spectral-peak landmarks (A. Wang 2003,
// "An industrial-strength audio search algorithm", Proc. ISMIR)
// would key on the machine's steady lines instead and match every recording
// of the machine.
//
// # Index and search
//
// Index uses bit-sampling locality-sensitive hashing for the Hamming
// distance (P. Indyk & R. Motwani 1998, "Approximate nearest neighbors:
// towards removing the curse of dimensionality", STOC): 12 tables, each
// keyed by 14 bits sampled at fixed random (frame, bit) positions inside a
// 64-frame window. Indexed prints store every 2nd window; a query probes
// every window. Hits vote for (print, offset) in 16-frame bins, one
// saturating byte per bin; keys held by more than 8 times the mean number
// of entries per key (plus 64) are skipped, as a key that many windows
// share carries no information. A print offers up to two candidate offsets:
// its two best pairs of neighbouring bins (apart from each other) that hold
// at least m votes, m the larger of 4 and the smallest count that fewer than
// 16 bin pairs would reach if the query's hits fell on the bins at random
// (Poisson); the 128 candidates with most votes are verified. (A copy whose
// bits are a third wrong collects few votes, no more than chance gives
// other recordings of the machine, whose hits come in clumps; hence the
// generous candidate list.) Verification cuts the query into 16-frame
// blocks (~0.25 s), tables each block's BER for offsets within ±20 frames
// of the candidate's, and searches the straight lines through the table,
// o(b) = o0 + ρ·t_b with |ρ| ≤ 3 % in 0.5 % steps (a constant shift plus
// the drift of a speed change); a line uses every block that lies wholly in
// the indexed print and needs half of them. Of all lines it keeps the most
// significant one, the lowest BER − Threshold(bits), bits being the number
// of live bits compared along the line, and the pair is a match when that
// BER is at or below Threshold(bits): 0.5 − c·z/(2√bits), capped at MaxBER
// (default 0.39), from the bit error model of Haitsma & Kalker (2002): see
// threshold.go. A first pass on every second pair of frames rejects
// candidates whose estimate exceeds its threshold by more than 0.05. Fewer
// bits (short clips, lines over part of the blocks, silent stretches) give
// a lower threshold, so every clip length is held to the same per-pair
// false-alarm bound. TestLeakedSets (THRUM_NEARDUP_EVAL=1) measures recall
// and false alarms on 1 000-clip leaked sets of 5 s and 10 s clips;
// TestLeakedSetsSmall runs a small version by default.
//
// Cost: memory is 4 bytes per table per stored window (8 when the print
// number and frame need more than 32 bits) plus 4 bytes per frame, about
// 15 KB per 10 s clip; each searcher holds 1 byte per indexed print per
// 16-frame offset bin. A query touches every entry that shares one of its
// keys, so its cost grows with the index size over 2^14: about 4 ms of one
// core for 10 s clips against 8 500 indexed ones. Search runs one Searcher
// per worker.
package neardup
