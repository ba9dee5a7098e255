// Package ledger owns thrum's record of what it wrote: the line schema, the
// file layout of an output tree, and every read and write of it.
//
// # Files
//
// Each machine id has a folder under the output root OUT:
//
//	OUT/<machine-id>/ledger.jsonl                         the ledger: one JSON object per line
//	OUT/<machine-id>/.journal-<stage>.jsonl               lines of a stage still running
//	OUT/<machine-id>/.journal-<stage>-<i>-of-<n>.jsonl    the same, for shard i of n
//	OUT/<machine-id>/parts/part-<stage>-<i>-of-<n>.jsonl  the finished section of shard i of n
//	OUT/.thrum.lock, OUT/.thrum.lock-<i>-of-<n>             the lock of the run writing OUT (LockOut)
//
// A stage writes each output file atomically and only then appends its line
// to the journal (Journal.Append), so a line never names a missing or
// partial file. At the end of the stage, Commit rewrites the ledger with
// that stage's section replaced (atomic rename) and removes the journal; a
// sharded run writes its part instead, and Merge later joins all parts of a
// stage into the ledger. A killed run leaves a journal (perhaps with a torn
// last line) from which Load lets the next run resume.
//
// Every shard writes a part for every machine of the plant, empty when it
// had no work for it, so Merge never waits for a part that cannot come.
//
// # Lock
//
// LockOut gives one run at a time an output root: an flock(2) on
// OUT/.thrum.lock (a shard's on OUT/.thrum.lock-<i>-of-<n>: shards of one
// run coexist, a run and its join do not), the file naming the holder. A
// lock whose holder died is taken over; Release removes the file.
//
// # Canonical order
//
// A ledger holds one section per stage in the order of Stages (expand,
// faults, features). Inside the expand and faults sections lines are in
// Sort order: condition as declared in the plant, source recording, clip,
// variant (the recorded clip, variant −1, first). The features section
// follows the split lists. Single runs, any worker count and merged shards
// therefore write byte-identical ledgers.
//
// # Schema versions
//
// Every line carries "schema", the version of its format:
//
//   - 0: lines written before the field existed. They have no "schema"
//     field and otherwise the fields of version 1; Read returns them with
//     Entry.Schema 0, and any rewrite (Commit, Merge) stamps them 1.
//   - 1: the current format (Schema), the fields of Entry.
//
// A line with a version above Schema was written by a newer thrum and may
// hold fields this one would drop on rewrite: Read refuses it with a
// *SchemaError naming the file and line. A version that adds or changes a
// field raises Schema, documents itself here and keeps reading the older
// ones.
//
// # Reading
//
// ReadFile reads one file, Load everything a machine folder records
// (ledger, journals, parts: what a rerun resumes from), ReadTree the
// committed ledgers of a whole output tree (what split, features and the
// audit work from).
package ledger
