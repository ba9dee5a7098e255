package split

import (
	"math"
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
	ixKeyBits = 14
	ixSpan    = 64
	// ixStride: only every ixStride-th window of an indexed print is stored;
	// a query probes every ixQueryStride-th of its own, so every alignment
	// meets stored windows, and the envelopes are smooth enough that a
	// window a frame or two off matches too.
	ixStride = 4
	// ixBin is the width, in frames, of the offset histogram bins.
	ixBin = 16
	// ixMinVotes is the vote count (in two neighbouring bins) that makes a
	// candidate worth verifying.
	ixMinVotes = 4
	// ixBlock is the verification block length in frames (~1 s); blocks are
	// compared at offsets within ±ixDrift of the candidate's, and the best
	// straight line through them follows a speed change of up to 3 %.
	ixBlock = 64
	ixDrift = 20
	// ixMaxVerify caps the candidates verified per query (most votes
	// first), which bounds the query cost whatever the index size.
	ixMaxVerify = 64
	// ixQueryStride: the query probes every ixQueryStride-th frame.
	ixQueryStride = 2
	// DefaultMaxBER is the verified bit error rate at or below which two
	// prints are called near-duplicates. Unrelated prints give about 0.5;
	// distinct recordings of one synthetic machine verify at 0.43 or more
	// after the best-line search, while copies after ±6 dB gain, ±0.5 s
	// shift, 10 dB SNR white noise or ±2 % speed measure 0 to 0.33
	// (TestNearDuplicateSearch).
	DefaultMaxBER = 0.39
)

type cand struct {
	pi, off int
	votes   int
}

// verifier holds the scratch space of verify.
type verifier struct {
	table []float64
	shift []int
}

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
// bytes plus 4 bytes per indexed frame. Add and Index.Query are not safe for
// concurrent use; for parallel queries give each goroutine a Searcher.
type Index struct {
	MaxBER float64 // 0 means DefaultMaxBER

	ids    []string
	prints [][]uint32
	// pat[t] lists the (frame offset, bit) pairs table t samples.
	pat    [ixTables][ixKeyBits]struct{ dt, bit uint8 }
	start  [ixTables][]uint32 // bucket directory: 2^ixKeyBits + 1 offsets
	ent    [ixTables][]uint64 // print<<24 | frame, grouped by key
	built  int                // number of prints in the tables
	maxLen int                // longest indexed print, frames
	def    *Searcher
}

// Searcher queries an Index with its own scratch space. Several searchers
// of one index may run concurrently, as long as nothing is added to the
// index meanwhile.
type Searcher struct {
	ix      *Index
	votes   []uint16
	touched []int
	best    map[int]cand
	cands   []cand
	vs      verifier
}

// NewSearcher builds the index's tables (if prints were added since) and
// returns a searcher for it.
func (ix *Index) NewSearcher() *Searcher {
	ix.build()
	return &Searcher{ix: ix, best: map[int]cand{}}
}

// Query is NewSearcher().Query(p) with a searcher kept by the index; it is
// not safe for concurrent use.
func (ix *Index) Query(p Print) []Match {
	if ix.def == nil {
		ix.def = ix.NewSearcher()
	}
	ix.build()
	return ix.def.Query(p)
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

// Bytes returns the approximate memory held by the index, in bytes: the
// words of every print and, once a query has built them, the tables.
func (ix *Index) Bytes() int {
	n := 0
	for _, w := range ix.prints {
		n += 4 * len(w)
	}
	for t := range ixTables {
		n += 8*len(ix.ent[t]) + 4*len(ix.start[t])
	}
	return n
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
// (ixSpan frames, about 1 s) are never matched. It panics if prints were
// added to the index after the searcher was made.
func (s *Searcher) Query(p Print) []Match {
	ix := s.ix
	if ix.built != len(ix.ids) {
		panic("split: Searcher used after Index.Add; make a new searcher")
	}
	w := p.Words
	if len(w) < ixSpan || len(ix.ids) == 0 {
		return nil
	}
	// Dense vote counters: one row of offset bins per indexed print.
	// offset = indexed frame − query frame ∈ (−len(w), maxLen).
	nb := (len(w)+ix.maxLen)/ixBin + 2
	if need := nb * len(ix.prints); cap(s.votes) < need {
		s.votes = make([]uint16, need)
	} else {
		s.votes = s.votes[:need]
	}
	s.touched = s.touched[:0]
	for t := range ixTables {
		st, ent := ix.start[t], ix.ent[t]
		for f := 0; f+ixSpan <= len(w); f += ixQueryStride {
			k := ix.key(t, w, f)
			for _, e := range ent[st[k]:st[k+1]] {
				c := int(e>>24)*nb + (int(e&(1<<24-1))-f+len(w))/ixBin
				v := s.votes[c]
				if v == 0 {
					s.touched = append(s.touched, c)
				}
				if v < 1<<16-1 {
					s.votes[c] = v + 1
				}
			}
		}
	}
	// Best bin pair per print.
	if s.best == nil {
		s.best = map[int]cand{}
	}
	clear(s.best)
	best := s.best
	for _, c := range s.touched {
		v := int(s.votes[c])
		if (c+1)%nb != 0 {
			v += int(s.votes[c+1])
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
	for _, c := range s.touched {
		s.votes[c] = 0
	}
	cands := s.cands[:0]
	for _, c := range best {
		cands = append(cands, c)
	}
	sort.Slice(cands, func(i, j int) bool {
		if cands[i].votes != cands[j].votes {
			return cands[i].votes > cands[j].votes
		}
		return cands[i].pi < cands[j].pi
	})
	s.cands = cands
	if len(cands) > ixMaxVerify {
		cands = cands[:ixMaxVerify]
	}
	maxBER := ix.MaxBER
	if maxBER == 0 {
		maxBER = DefaultMaxBER
	}
	var out []Match
	for _, c := range cands {
		e, off := s.vs.verify(w, ix.prints[c.pi], c.off)
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

// verify scores a candidate alignment. The query q is cut into ixBlock-frame
// blocks and each block's BER against d is tabled for every offset within
// ±ixDrift of off (indexed frame = query frame + offset). The score is the
// best straight line through that table,
//
//	o(b) = o0 + ρ·(centre of block b − centre of q),  |o0 − off| ≤ ixDrift,
//	ρ ∈ {−0.03, −0.025, …, 0.03},
//
// i.e. a constant offset plus the linear drift of a speed change up to ±3 %;
// the mean BER of the blocks along the best line is returned with the
// offset at the query's centre. Blocks the line leaves the table or the
// indexed print for are skipped; a line needs half the blocks. With none it
// returns 1.
func (vs *verifier) verify(q, d []uint32, off int) (float64, int) {
	nb := len(q) / ixBlock
	if nb == 0 {
		return 1, off
	}
	const no = 2*ixDrift + 1
	if cap(vs.table) < nb*no {
		vs.table = make([]float64, nb*no)
		vs.shift = make([]int, nb)
	}
	table := vs.table[:nb*no]
	shift := vs.shift[:nb]
	for b := range nb {
		row := table[b*no : (b+1)*no]
		blk := q[b*ixBlock : (b+1)*ixBlock]
		for j := range no {
			lo := b*ixBlock + off - ixDrift + j
			if lo < 0 || lo+ixBlock > len(d) {
				row[j] = -1
				continue
			}
			diff := 0
			for i, v := range blk {
				diff += bits.OnesCount32(v ^ d[lo+i])
			}
			row[j] = float64(diff) / (32 * ixBlock)
		}
	}
	mid := float64(len(q)) / 2
	best, bestOff := 2.0, off
	for r := -6; r <= 6; r++ {
		rho := 0.005 * float64(r)
		for b := range shift {
			shift[b] = int(math.Round(rho * (float64(b*ixBlock+ixBlock/2) - mid)))
		}
		for j0 := range no {
			var sum float64
			n := 0
			for b := range nb {
				j := j0 + shift[b]
				if j < 0 || j >= no || table[b*no+j] < 0 {
					continue
				}
				sum += table[b*no+j]
				n++
			}
			if 2*n < nb || n == 0 {
				continue
			}
			if e := sum / float64(n); e < best {
				best, bestOff = e, off-ixDrift+j0
			}
		}
	}
	if best > 1 {
		return 1, off
	}
	return best, bestOff
}
