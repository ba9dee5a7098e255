// Package evalstage is the evaluate stage: it reads an output root's
// features (OUT/features/index.csv and the log-mel .npy files it names),
// trains the baseline detectors of package features/evaluate on normal
// training clips only, scores the recorded eval and test clips, and writes
// OUT/evaluate/summary.json and ROC pictures.
//
// # What is trained on what
//
// Training clips are the index rows whose use is train-normal: recorded
// normal clips of the train split and their augmented variants (and, with
// Options.Masked, the masked copies of both). Synthetic fault cues
// (use synthetic-anomaly) and real anomalous recordings never enter a
// training set; Run refuses an index whose train-normal rows say otherwise.
// Each detector is trained per machine (Options.PerCondition: per machine
// and condition; a hold-out condition, which has no training clips, is then
// scored by the machine-wide model) on these training sets:
//
//	recorded                 the recorded clips only
//	expanded                 the recorded clips and their variants
//	expanded+masked          the same and every masked copy (Options.Masked)
//	expanded-without-<kind>  expanded, less the variants whose ledger steps
//	                         include that step kind (Options.Ablate)
//
// # What is scored
//
// The recorded clips of the eval and test splits, pooled (no detector
// setting is tuned on eval, so both are unseen data), per machine over the
// conditions that have training clips ("all conditions"), and per
// condition; hold-out conditions are reported apart, as the domain-shift
// case. AUC is the Mann–Whitney statistic; the partial AUC is the area
// under the ROC for false-positive rates 0 to MaxFPR divided by MaxFPR, so
// that it lies in [0, 1] (a random detector scores MaxFPR/2 on it).
//
// Intervals resample whole groups (the clips of one recording or session
// are not independent): normal and anomalous groups are drawn separately,
// with replacement, Rounds times (evaluate.BootstrapCI). The difference
// between a training set and the recorded-only one is bootstrapped on the
// same resamples (evaluate.BootstrapDiffCI: one draw of groups scores
// both). Every interval of one scope, detector and metric uses the same
// seed, so the same draws: the seed derives from the plant seed (plan.json)
// or Options.Seed, the machine, the scope, the detector and the metric, and
// adding a training set or a machine changes no other interval.
//
// # Proxy scores
//
// Where a scope has no real anomalous clip, a proxy row scores the
// scope's synthetic fault cues as positives against the recorded eval and
// test normal clips. The cues are made from training clips, which the
// detectors have seen, so the proxy is not an estimate of performance on
// real faults; it is reported apart and always labelled proxy.
//
// # Credibility
//
// Per condition, from the embeddings (evaluate.Embedding) of the clips:
// the squared Fréchet distance between the recorded training clips and
// their variants, and between the recorded training clips and the eval and
// test normal clips (how far real recordings of the same condition lie
// apart); between every two conditions of a machine, the distance between
// their recorded normal clips (how far real conditions lie apart). Each
// variant gets an outlier score (evaluate.OutlierScores against the
// recorded training clips of its condition: about 1 is typical, much more
// is far from every recording), and the worst are listed.
//
// All output depends only on the files read and the options, not on the
// worker count.
package evalstage
