package split

import (
	"math/bits"
	"math/rand/v2"
	"sort"
)

// Index parameters (see doc.go, "Near-duplicate search").
const (
	// ixTables is the number of hash tables; each samples ixKeyBits bits.
	ixTables = 12
	// ixKeyBits is the key length: bits sampled from a window of ixSpan
	// frames (bit sampling LSH for the Hamming distance, Indyk & Motwani 1998).
	ixKeyBits = 16
	ixSpan    = 64
	// ixStride: only every ixStride-th frame of an indexed print is stored;
	// a query probes all its frames, so any alignment is still found, and the
	// envelopes are smooth enough that a neighbouring frame matches too.
	ixStride = 4
	// ixBin is the width, in frames, of the offset histogram bins.
	ixBin = 8
	// ixMinVotes is the vote count (in two neighbouring bins) that makes a
	// candidate worth verifying.
	ixMinVotes = 4
	// ixBlock is the verification block length in frames (~1 s); each
	// block finds its own best offset within ±ixDrift of the candidate's,
	// which follows a speed change of a few percent.
	ixBlock = 64
	ixDrift = 12
	// ixMaxVerify caps the candidates verified per query (most votes
	// first), which bounds the query cost whatever the index size.
	ixMaxVerify = 16
	// ixQueryStride: the query probes every ixQueryStride-th frame.
	ixQueryStride = 2
	// DefaultMaxBER is the verified bit error rate at or below which two
	// prints are called near-duplicates. Unrelated prints give about 0.5
	// (about 0.45 after the best-offset search); copies after gain, shift,
	// 10 dB SNR noise or a 2 % speed change measure 0.15 to 0.33 here.
	DefaultMaxBER = 0.39
)

// Match is one indexed print found near a query.
type Match struct {
	ID string
	// Offset is the frame offset of the best alignment: indexed frame =
	// query frame + Offset (times Print.Hop seconds).
	Offset int
	// BER is the verified bit error rate (mean of the block-wise minima).
	BER float64
	// Votes is the number of hash hits that proposed the candidate.
	Votes int
}

// Index finds near-duplicates of a print among the prints added to it, by
// bit-sampling hash tables and offset voting, then verifying the best
// candidates by their bit error rate. Memory is about ixTables·8/ixStride
// bytes plus 4 bytes per indexed frame. An Index is not safe for concurrent
// use: Query reuses scratch space.
type Index struct {
	MaxBER float64 // 0 means DefaultMaxBER

	ids    []string
	prints [][]uint32
	// pat[t] lists the (frame offset, bit) pairs table t samples.
	pat   [ixTables][ixKeyBits]struct{ dt, bit uint8 }
	start [ixTables][]uint32 // bucket directory: 2^ixKeyBits + 1 offsets
	ent   [ixTables][]uint64 // print<<24 | frame, grouped by key
	built int                // number of prints in the tables
	// scratch for Query
	votes   []uint16
	touched []int
	maxLen  int // longest indexed print, frames
}

// NewIndex returns an empty index. The bit-sampling patterns come from a
// fixed PCG seed, so two indexes built from the same prints answer alike.
func NewIndex() *Index {
	ix := &Index{}
	rng := rand.New(rand.NewPCG(0x7468_7275_6d, 1))
	for t := range ix.pat {
		for k := range ix.pat[t] {
			ix.pat[t][k].dt = uint8(rng.IntN(ixSpan))
			ix.pat[t][k].bit = uint8(rng.IntN(32))
		}
	}
	return ix
}

// Len returns the number of prints added.
func (ix *Index) Len() int { return len(ix.ids) }

// Add adds print p under id. The index keeps p.Words (do not modify it
// afterwards).
func (ix *Index) Add(id string, p Print) {
	ix.ids = append(ix.ids, id)
	ix.prints = append(ix.prints, p.Words)
	ix.maxLen = max(ix.maxLen, len(p.Words))
}

func (ix *Index) key(t int, w []uint32, f int) uint32 {
	var k uint32
	for i, pb := range ix.pat[t] {
		k |= (w[f+int(pb.dt)] >> pb.bit & 1) << i
	}
	return k
}

// build (re)builds the tables by counting sort on the key.
func (ix *Index) build() {
	if ix.built == len(ix.ids) {
		return
	}
	const nk = 1 << ixKeyBits
	for t := range ixTables {
		cnt := make([]uint32, nk+1)
		for _, w := range ix.prints {
			for f := 0; f+ixSpan <= len(w); f += ixStride {
				cnt[ix.key(t, w, f)+1]++
			}
		}
		for k := 1; k <= nk; k++ {
			cnt[k] += cnt[k-1]
		}
		ent := make([]uint64, cnt[nk])
		pos := make([]uint32, nk)
		copy(pos, cnt[:nk])
		for pi, w := range ix.prints {
			for f := 0; f+ixSpan <= len(w); f += ixStride {
				k := ix.key(t, w, f)
				ent[pos[k]] = uint64(pi)<<24 | uint64(f)
				pos[k]++
			}
		}
		ix.start[t] = cnt
		ix.ent[t] = ent
	}
	ix.built = len(ix.ids)
}

// Query returns the indexed prints whose verified BER against p is at or
// below MaxBER, best first (ties by id). Prints shorter than one key window
// (ixSpan frames, about 1 s) are never matched.
func (ix *Index) Query(p Print) []Match {
	ix.build()
	w := p.Words
	if len(w) < ixSpan || len(ix.ids) == 0 {
		return nil
	}
	// Dense vote counters: one row of offset bins per indexed print.
	// offset = indexed frame − query frame ∈ (−len(w), maxLen).
	nb := (len(w)+ix.maxLen)/ixBin + 2
	if need := nb * len(ix.prints); cap(ix.votes) < need {
		ix.votes = make([]uint16, need)
	} else {
		ix.votes = ix.votes[:need]
	}
	ix.touched = ix.touched[:0]
	for t := range ixTables {
		st, ent := ix.start[t], ix.ent[t]
		for f := 0; f+ixSpan <= len(w); f += ixQueryStride {
			k := ix.key(t, w, f)
			for _, e := range ent[st[k]:st[k+1]] {
				c := int(e>>24)*nb + (int(e&(1<<24-1))-f+len(w))/ixBin
				v := ix.votes[c]
				if v == 0 {
					ix.touched = append(ix.touched, c)
				}
				if v < 1<<16-1 {
					ix.votes[c] = v + 1
				}
			}
		}
	}
	// Best bin pair per print.
	type cand struct {
		pi, off int
		votes   int
	}
	best := map[int]cand{}
	for _, c := range ix.touched {
		v := int(ix.votes[c])
		if (c+1)%nb != 0 {
			v += int(ix.votes[c+1])
		}
		if v < ixMinVotes {
			continue
		}
		pi := c / nb
		off := (c%nb)*ixBin - len(w) + ixBin
		if b, ok := best[pi]; !ok || v > b.votes {
			best[pi] = cand{pi, off, v}
		}
	}
	for _, c := range ix.touched {
		ix.votes[c] = 0
	}
	cands := make([]cand, 0, len(best))
	for _, c := range best {
		cands = append(cands, c)
	}
	sort.Slice(cands, func(i, j int) bool {
		if cands[i].votes != cands[j].votes {
			return cands[i].votes > cands[j].votes
		}
		return cands[i].pi < cands[j].pi
	})
	if len(cands) > ixMaxVerify {
		cands = cands[:ixMaxVerify]
	}
	maxBER := ix.MaxBER
	if maxBER == 0 {
		maxBER = DefaultMaxBER
	}
	var out []Match
	for _, c := range cands {
		e, off := verify(w, ix.prints[c.pi], c.off)
		if e <= maxBER {
			out = append(out, Match{ID: ix.ids[c.pi], Offset: off, BER: e, Votes: c.votes})
		}
	}
	sort.Slice(out, func(i, j int) bool {
		if out[i].BER != out[j].BER {
			return out[i].BER < out[j].BER
		}
		return out[i].ID < out[j].ID
	})
	return out
}

// verify returns the mean over ixBlock-frame blocks of q of each block's
// minimum BER against d for offsets within ±ixDrift of off (indexed frame =
// query frame + offset), and the offset of the best block. Blocks without a
// full overlap are skipped; with none, it returns 1.
func verify(q, d []uint32, off int) (float64, int) {
	var sum float64
	n := 0
	bestOff, bestE := off, 2.0
	for s := 0; s+ixBlock <= len(q); s += ixBlock {
		blk := q[s : s+ixBlock]
		m := 2.0
		mo := off
		for o := off - ixDrift; o <= off+ixDrift; o++ {
			lo := s + o
			if lo < 0 || lo+ixBlock > len(d) {
				continue
			}
			diff := 0
			for i, v := range blk {
				diff += bits.OnesCount32(v ^ d[lo+i])
			}
			if e := float64(diff) / (32 * ixBlock); e < m {
				m, mo = e, o
			}
		}
		if m > 1 {
			continue
		}
		sum += m
		n++
		if m < bestE {
			bestE, bestOff = m, mo
		}
	}
	if n == 0 {
		return 1, off
	}
	return sum / float64(n), bestOff
}
