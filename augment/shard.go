package augment

import "hash/fnv"

// Shard selects a deterministic share of the work: job j (a machine and
// recording) belongs to shard I of N when a hash of its key is I modulo N.
type Shard struct{ I, N int }

// Has reports whether the shard owns a work key.
func (s Shard) Has(key string) bool {
	if s.N <= 1 {
		return true
	}
	h := fnv.New64a()
	h.Write([]byte(key))
	return int(h.Sum64()%uint64(s.N)) == s.I
}
