// Package split assigns the files of a thrum output tree to train, eval and
// test so that no evaluation clip, nor anything derived from it, reaches
// training; it writes the lists, and audits a tree for leakage, including a
// near-duplicate search across the split boundary.
//
// # Assignment rules
//
// The unit is the group: a machine id and its ledger Group (the source
// recording, or its session). All files of a group share one split:
//
//	u = Unit(seed, "group", machine, group) ∈ [0, 1)
//	split = train if u < f_train; eval if u < f_train + f_eval; test otherwise
//
// Unit is SHA-256 over "thrum/split/v1\x00", the plant seed (8 bytes little
// endian) and the NUL-terminated strings kind, machine id and key; the first
// 8 bytes, big endian, top 53 bits over 2^53. A group's split depends on
// nothing but its own key, so adding recordings never moves existing ones.
//
// Fractions come per machine id (Machine.Split), else from the plant
// (Plant.Split), else DefaultFractions: train 0.70, eval 0.15, test 0.15,
// anomalous_eval 0.5. train + eval + test must be 1.
//
//   - A group with a real (recorded) anomalous clip goes to eval when
//     u < anomalous_eval, to test otherwise; never to train.
//   - A group with a clip in a hold-out condition goes to test.
//   - Only recorded files go to eval or test. Augmented and synthetic-fault
//     files are training-only: in a group whose split is eval or test they
//     are excluded (listed with split "excluded", reason "derived-of-eval").
//     They are dropped rather than moved to train, because a variant of an
//     evaluation recording in training is exactly the leak this package
//     prevents; the recorded clips keep the group's split.
//   - A training file mixed with a background whose own split is not train
//     is excluded (reason "background-not-train").
//   - Backgrounds are partitioned like groups: Unit(seed, "background", "",
//     id) against the default fractions. An eval/test file never carries a
//     training background, a training file never an eval/test one.
//   - A training file whose speed, condition rpm × Speed, lies inside the
//     band rpm·(1 ± band_percent/100) of a hold-out condition of the same
//     machine is an error: the hold-out would no longer test an unseen speed.
//   - When the normal recorded groups of one machine and condition are
//     fewer than the splits with a non-zero fraction, Assign fails with a
//     *TooFewGroupsError naming both. With enough groups a split may still
//     come out empty by chance (the hash is not forced, to stay stable);
//     Summarize shows it.
//
// # Use
//
//	entries, _ := split.ReadLedgers(out)
//	pol := split.PolicyFromPlant(plant)
//	rows, err := split.Assign(split.ItemsFromLedger(entries), pol)
//	err = split.WriteSplits(out, rows, pol)
//	rep, err := split.Audit(out, split.AuditOptions{})  // rep.OK()
//
// Expansion should draw only backgrounds with
// AssignBackgrounds(ids, pol)[id] == "train".
//
// # Files
//
// WriteSplits writes, under OUT/splits/, each by temporary file and rename:
// lists.csv (path, machine, condition, split, origin, label, group, sha256,
// source, source_sha256, speed, backgrounds joined by ";", reason),
// summary.csv (machine, split, origin, label, files, groups),
// backgrounds.csv (id, split) and plan.json (the Policy: seed, fractions,
// conditions with rpm, band and hold-out; and the background partition), so
// that Audit can redo everything from OUT alone.
//
// # Audit and the leakage taxonomy
//
// Audit reads the ledgers, lists, plan, features/<machine>/stats.json and
// the audio, and reports each broken rule with the files it concerns. The
// rules and the leakage type of Kapoor & Narayanan (2023, Patterns 4(9)
// 100804) each guards against:
//
//	rule                                 leakage type
//	lists-match-re-derived-assignment    no clean train/test split (L1.1)
//	listed-file-exists-and-matches       no clean train/test split (L1.1)
//	real-anomalies-not-in-training       no clean train/test split (L1.1)
//	statistics-fitted-on-training-only   pre-processing on train and test data together (L1.2)
//	no-identical-file-across-splits      duplicates across train and test (L1.4)
//	no-near-duplicate-across-splits      duplicates across train and test (L1.4)
//	group-in-one-split                   non-independence between train and test samples (L3.2)
//	source-recording-in-one-split        non-independence between train and test samples (L3.2)
//	hold-out-condition-intact            non-independence between train and test samples (L3.2)
//	no-training-speed-in-hold-out-band   non-independence between train and test samples (L3.2)
//	backgrounds-partitioned              non-independence between train and test samples (L3.2)
//	eval-test-file-is-a-recorded-clip    test set not drawn from the distribution of interest (L3.3)
//	derived-files-training-only          test set not drawn from the distribution of interest (L3.3)
//
// Each violation is one line of Report.WriteText:
//
//	<rule> [<leakage type>]: <file>[, <file>]: <detail>
//
// Not covered: temporal leakage (L3.1; the ledger has no recording dates),
// illegitimate features (L2) and feature selection on all data (L1.3).
// "eval-test-file-is-a-recorded-clip" compares the SHA-256 of the bytes on
// disk with the ledgers' recorded clips. AuditLists runs the duplicate rules
// alone on two sets of plain files, with no ledger.
//
// # Near-duplicate fingerprint
//
// The print follows J. Haitsma & T. Kalker (2002), "A highly robust audio
// fingerprinting system", Proc. ISMIR (from memory): 32 bits per frame from the signs of
// time-and-frequency differences of band energies,
//
//	F(t,m) = 1  if  [E(t+L,m) − E(t+L,m+1)] − [E(t,m) − E(t,m+1)] > 0,
//
// with these parameters: frames of 2^⌈log2(0.03·fs)⌉ samples (512 at
// 16 kHz), periodic Hann window, hop half a frame (16 ms); 33 bands equally
// spaced in mel (2595·log10(1 + f/700)) from 300 Hz to min(6 kHz, 0.45 fs);
// E smoothed over 32 frames (~0.5 s) with Hann weights; lag L = 4 frames.
// The smoothing replaces Haitsma & Kalker's long overlapping frames at a
// fraction of the FFT cost. Why this method: distinct recordings of one
// machine share its harmonic lines and long-term spectrum; the double
// difference cancels everything steady (lines, spectrum shape, gain), so the
// bits follow the slow fluctuations of that recording's noise and impacts,
// which differ between recordings. Spectral-peak landmarks (A. Wang 2003,
// "An industrial-strength audio search algorithm", Proc. ISMIR)
// would key on the machine's steady lines instead and match every recording
// of the machine.
//
// # Near-duplicate search
//
// Index uses bit-sampling locality-sensitive hashing for the Hamming
// distance (P. Indyk & R. Motwani 1998, "Approximate nearest neighbors:
// towards removing the curse of dimensionality", STOC): 12 tables, each keyed by 14 bits sampled
// at fixed random (frame, bit) positions inside a 64-frame window. Indexed
// prints store every 4th window; a query probes every 2nd. Hits vote for (print, offset) in 16-frame bins, one saturating byte per
// bin; keys held by more than 8 times the mean number of entries per key
// (plus 64) are skipped, as a key that many windows share carries no
// information. A print is a candidate when its best two neighbouring bins
// hold at least m votes, m the larger of 4 and the smallest count that
// fewer than 16 bin pairs would reach if the query's hits fell on the bins
// at random (Poisson); the 64 candidates with most votes are verified.
// Verification cuts the query into 64-frame blocks (~1 s), tables each
// block's BER for offsets within ±20 frames of the candidate's, and takes
// the best straight line through the table, o(b) = o0 + ρ·t_b with
// |ρ| ≤ 3 % in 0.5 % steps (a constant shift plus the drift of a speed
// change). A first pass on every second pair of frames rejects candidates
// whose estimate exceeds MaxBER + 0.05. The mean BER along the best line at
// or below MaxBER (default 0.39) is a match. Unrelated prints verify near
// 0.5 and distinct recordings of one synthetic machine at 0.43 or more;
// copies after ±6 dB gain, ±0.5 s shift, 10 dB SNR white noise or ±2 %
// speed measure at most 0.33 in the package tests.
//
// Cost: memory is 4 bytes per table per stored window (8 when the print
// number and frame need more than 32 bits) plus 4 bytes per frame, about
// 9 KB per 10 s clip; each searcher holds 1 byte per indexed print per
// 16-frame offset bin. A query touches every entry that shares one of its
// keys, so its cost grows with the index size over 2^14: about 4 ms of one
// core for 10 s clips against 8 500 indexed ones. Audit runs one Searcher
// per worker.
package split
