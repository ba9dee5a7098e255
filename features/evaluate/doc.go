// Package evaluate scores how well a detector trained on a machine's
// normal clips tells its anomalous clips apart, and how far variants lie
// from the recordings they were made from. Clips are log-mel features
// indexed [frame][band] (dB, as the features stage writes them); nothing
// here reads files.
//
// # Detectors
//
// Both detectors are fitted on normal training clips only (recorded, or
// recorded plus variants) and give larger scores to clips that look less
// like them.
//
// Gaussian (NewGaussian, NewGaussianHop): a context vector stacks C
// consecutive frames of a clip into one vector of C·B values, frames
// [s, s+C) for s = 0, H, 2H, … (H the hop: C frames for NewGaussian, so
// the vectors tile the clip without overlap; any hop with NewGaussianHop);
// a clip of F ≥ C frames gives 1 + ⌊(F − C)/H⌋ vectors, frames past the
// last whole vector left out. Fit estimates the
// mean μ and a Ledoit–Wolf covariance Σ of all training vectors and
// factors Σ = UᵀU (Cholesky); a clip's score is the mean over its vectors
// of the Mahalanobis distance √((x − μ)ᵀ Σ⁻¹ (x − μ)) = ‖U⁻ᵀ(x − μ)‖.
//
// KNN (NewKNN): a clip's embedding is the per-band mean of its frames
// followed by the per-band standard deviation (2·B values). Each element
// is standardised with the mean and standard deviation of the training
// embeddings only (an element that does not vary in training is centred,
// not scaled); the score is the mean Euclidean distance to the k nearest
// training embeddings.
//
// # Ledoit–Wolf shrinkage
//
// Ledoit & Wolf (2004), "A well-conditioned estimator for
// large-dimensional covariance matrices", J. Multivariate Analysis 88(2),
// Lemmas 3.2–3.4 and Theorem 3.2, with the n centred vectors x_k of
// dimension p, S = (1/n)·Σ x_k·x_kᵀ and ‖A‖² = tr(A·Aᵀ) (the paper divides
// every squared norm by p, which cancels in δ):
//
//	m  = tr(S)/p
//	d² = ‖S − m·I‖²
//	b̄² = (1/n²)·Σ_k ‖x_k·x_kᵀ − S‖² = (1/n)·((1/n)·Σ_k ‖x_k‖⁴ − ‖S‖²)
//	b² = min(b̄², d²),  δ = b²/d²  (δ = 1 when d² = 0)
//	Σ  = δ·m·I + (1 − δ)·S
//
// This is the estimator scikit-learn's ledoit_wolf computes. δ is the
// shrinkage weight LedoitWolf returns; Σ is positive definite whenever
// δ > 0 and m > 0, also with fewer vectors than dimensions.
//
// # Scores
//
// AUC is the Mann–Whitney statistic U/(n_neg·n_pos): the share of
// (normal, anomalous) pairs in which the anomalous clip scores higher, a
// tie counting one half. ROC steps the threshold down through the distinct
// scores; a run of tied scores is one point, so the curve crosses it on a
// straight line and its area equals AUC.
//
// PartialAUC(s, maxFPR) is the area under the ROC for false-positive rates
// in [0, maxFPR], the curve interpolated linearly at maxFPR, divided by
// maxFPR: a detector that ranks every anomalous clip first reads 1, one
// that ranks them all last reads 0, and a random ranking about maxFPR/2.
// This is the plain normalisation (common practice in machine-condition
// monitoring benchmarks), not McClish's standardisation (McClish 1989, Medical
// Decision Making 9(3)), which maps the chance diagonal to 0.5 as
// (1/2)·(1 + (A − A_min)/(A_max − A_min)); that one is not used here.
//
// # Bootstrap intervals
//
// Clips cut from one recording are not independent, so BootstrapCI
// resamples whole groups (Scored.Group, e.g. the recording), the normal
// and the anomalous groups separately and with replacement, as many of
// each as there are; each resample therefore holds both classes. The
// interval is the percentile interval of the metric over the resamples
// (linear interpolation between order statistics); resamples where the
// metric is NaN are left out. Randomness is a PCG seeded with the given
// seed, so the same scores and seed give the same interval.
// BootstrapDiffCI does the same for the difference of one metric between
// two scorings of the same clips (e.g. trained on recorded clips only, and
// on recorded clips plus variants), drawing the same groups for both.
// With a single group per class the interval collapses to the point
// estimate: it then says nothing about the spread.
//
// # Credibility
//
// Frechet is the squared Fréchet distance between two Gaussians,
//
//	‖μ1 − μ2‖² + tr C1 + tr C2 − 2·tr √(√C1·C2·√C1)
//
// (Dowson & Landau 1982; the form used by the Fréchet audio and inception
// distances), with the symmetric square roots taken by eigendecomposition.
// For diagonal covariances it reduces to
// Σ (μ1 − μ2)² + Σ (s1 + s2 − 2·√(s1·s2)). FrechetSets fits a mean and a
// Ledoit–Wolf covariance to each set of vectors (e.g. embeddings of the
// recorded training clips of a condition, of its variants, of its eval
// normals) and returns Frechet between them.
//
// OutlierScores rates each variant by the distance of its embedding to the
// nearest recorded embedding of its condition, both standardised with the
// recorded mean and standard deviation, divided by the median distance of
// a recorded embedding to its nearest other recorded one: about 1 is as
// close as the recordings lie to each other, much more is far from every
// recording.
//
// # Errors
//
// Fit, Frechet and FrechetSets return errors prefixed "evaluate: " naming
// the clip, frame and band (or vector and element) at fault: no clips,
// empty or ragged clips, values that are not finite. Functions without an
// error result return NaN (or nil) on such input instead; nothing panics
// on bad data.
package evaluate
