// Package split assigns the files of a thrum output tree to train, eval and
// test so that no evaluation clip, nor anything derived from it, reaches
// training; it writes the lists, and audits a tree for leakage, including a
// near-duplicate search across the split boundary.
//
// # Assignment rules
//
// The unit is the group: a machine id and its ledger Group (the source
// recording, its session, or a block of it). All files of a group share one
// split. Every group has a stable hash
//
//	u = Unit(seed, "group", machine, group) ∈ [0, 1)
//
// Unit is SHA-256 over "thrum/split/v1\x00", the plant seed (8 bytes little
// endian) and the NUL-terminated strings kind, machine id and key; the first
// 8 bytes, big endian, top 53 bits over 2^53.
//
// Fractions come per machine id (Machine.Split), else from the plant
// (Plant.Split), else DefaultFractions: train 0.70, eval 0.15, test 0.15,
// anomalous_eval 0.5. train + eval + test must be 1. The plant's
// split_method says how groups are dealt (Policy.Decide):
//
//   - "shares" (default): the normal groups of one machine and condition,
//     ordered by u (then name), are dealt train first, then eval, then test,
//     by the counts that meet n × fraction as closely as whole groups allow
//     (largest remainder, every split with a non-zero fraction getting one
//     group first when there are enough). Adding a recording changes n and
//     takes a place in the order, so some existing groups near a boundary
//     of the order may move to another split; a rerun with the same
//     recordings always gives the same answer.
//   - "stable-hash": split = train if u < f_train; eval if u < f_train +
//     f_eval; test otherwise. A group depends on nothing but its own key, so
//     adding recordings never moves existing ones, but with few groups the
//     shares are met only on average and a split may stay empty.
//
// Further rules:
//
//   - A group pinned in plant.toml ([[machine.pin]] group, split) keeps that
//     split and counts towards its share; pinning a real anomalous or
//     hold-out group to train is an error.
//   - A group with a real (recorded) anomalous clip goes to eval or test,
//     never to train: with "shares" a machine's anomalous groups, in u
//     order, are dealt by anomalous_eval and 1 − anomalous_eval, so eval and
//     test each get one whenever there are two or more; with "stable-hash"
//     eval when u < anomalous_eval.
//   - A group with a clip in a hold-out condition goes to test.
//   - With block_seconds set, a recording outside a session folder longer
//     than one block is cut into blocks of floor(block_seconds /
//     clip_seconds) clips, each its own group (path#block-NNN). Where two
//     neighbouring blocks have different splits, the last clip of the
//     earlier one is a guard gap: excluded (reason "guard-gap") with every
//     file derived from it, so no clips recorded back to back straddle two
//     splits.
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
//     A hold-out condition whose band holds the file's own condition's rpm
//     (a load condition at the same speed) tests something other than speed
//     and keeps no band free.
//   - When the normal recorded groups of one machine and condition are
//     fewer than the splits with a non-zero fraction, Assign fails with a
//     *TooFewGroupsError naming both. EmptySplits warns of a split left
//     without normal groups (by chance with "stable-hash") and of a machine
//     whose eval or test holds no real anomalous recording.
//
// # Use
//
// Before any split is made, the expand and faults stages follow the
// training policy, which gives the answers Assign will give, from the plant
// and its inventory alone (the usable recordings are the groups the ledgers
// will hold):
//
//	opt := augment.Options{Out: out, Policy: split.TrainingPolicy(inventory)}
//
// so only training clips get variants and fault cues, and training
// variants mix in only the train share of the background partition. The
// split stage is one call; its parts are usable alone:
//
//	res, err := split.Run(ctx, plant, out)  // merge parts, assign, write lists
//
//	entries, _ := ledger.ReadTree(out)
//	pol := split.PolicyFromPlant(plant)
//	rows, err := split.Assign(ctx, split.ItemsFromLedger(entries), pol)
//	err = split.WriteSplits(out, rows, pol)
//	rep, err := split.Audit(ctx, out, split.AuditOptions{})  // rep.OK()
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
// Report.WriteText groups the violations by rule and machine pair (the
// machines of the files, "a ↔ b" for two), each group a heading with its
// count and its first TextGroupLines violations, the rest counted:
//
//	<rule> [<leakage type>] <machine>[ ↔ <machine>]: <n> violation(s)
//	  <file>[, <file>]: <detail>
//	  … and <k> more (--json lists every one)
//
// Violation.String is the one-line form of a single violation,
// "<rule> [<leakage type>]: <file>[, <file>]: <detail>".
//
// Not covered: temporal leakage (L3.1; the ledger has no recording dates),
// illegitimate features (L2) and feature selection on all data (L1.3).
// "eval-test-file-is-a-recorded-clip" compares the SHA-256 of the bytes on
// disk with the ledgers' recorded clips. AuditLists runs the duplicate rules
// alone on two sets of plain files, with no ledger.
//
// # Near-duplicate search
//
// The no-near-duplicate-across-splits rule fingerprints every listed file
// and searches the training prints for each eval/test print with package
// thrum/split/neardup, whose documentation describes the print, the index
// and their cost.
package split
