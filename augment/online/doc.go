// Package online serves freshly drawn variants of a plant's training clips
// to a training loop over HTTP (`thrum serve`), with the same draw, steps,
// source spans and credibility guard as the expand stage
// (augment.Renderer) and the same evaluation safety: only clips the
// training policy (split.TrainingPolicy) gives variants and the split
// lists in OUT/splits put in train are ever served, and only training
// backgrounds are mixed in. Requests for eval or test data are refused.
//
// # Epochs, batches, items and seeds
//
// A machine's training set is its training clips in a fixed order (source
// path, then clip index); TrainingSHA256 names that list. Epoch e serves
// every clip once, in the order of a permutation drawn from
//
//	augment.VariantSeed(plantSeed, machineID, trainingSHA256, e, 0, "serve-order")
//
// Batch b of size n holds positions b·n … b·n+n−1 of that order (the last
// batch of an epoch may be short). The clip at a position is rendered from
//
//	augment.VariantSeed(plantSeed, machineID, sourceSHA256, clip, e, "serve")
//
// and, when the credibility guard rejects that draw, from purpose
// "serve-retry-1", "serve-retry-2", … up to MaxAttempts draws in all; the
// rejections replaced are listed in the batch's description. A clip whose
// every draw is rejected is served as recorded (fallback "recorded").
// So (epoch, batch, item) and the batch size determine every seed, and the
// same plant, recordings and epoch give byte-identical batches whatever
// the worker count or the order of the requests; a clip's variant in an
// epoch does not even depend on the batch size.
//
// # Record and replay
//
// Each served batch is recorded in OUT/serve/<machine>.jsonl: a "session"
// line when a server starts (plant.toml's sha256, the plant seed, the
// training list's size and sha256), an "epoch" line the first time an
// epoch is served (its order seed), and one "batch" line per batch served
// (epoch, batch, size, item count, rejections replaced, and the batch
// digest). That is enough to regenerate any served item; Replay does, and
// checks it against the digest. An item's sha256 is that of its waveform
// as little-endian float32; the batch digest is the sha256 of its items'
// 32-byte digests in order.
package online
