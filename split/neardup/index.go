package neardup

import (
	"encoding/binary"
	"math"
	"math/bits"
	"math/rand/v2"
	"slices"
	"sort"
)

// Index parameters (see doc.go, "Index and search").
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
	// window a frame or two off matches too. Every second window (rather
	// than every fourth) doubles the votes of a copy whose bits are a third
	// wrong, which chance votes of other recordings of the machine often
	// outnumber otherwise.
	ixStride = 2

	// ixBin is the width, in frames, of the offset histogram bins.
	ixBin = 16
	// ixMinVotes is the least vote count (in two neighbouring bins) that
	// makes a candidate worth verifying; large indexes need more (ixChance).
	ixMinVotes = 4
	// ixBlock is the verification block length in frames (~0.25 s); blocks
	// are compared at offsets within ±ixDrift of the candidate's, and the
	// best straight line through them follows a speed change of up to 3 %.
	// Short blocks let a line use nearly all of the overlap of a shifted
	// copy (a block must lie wholly inside the indexed print) while the
	// drift of a 3 % speed change inside one block stays under half a frame.
	ixBlock = 16
	ixDrift = 20
	// ixMaxVerify caps the candidates verified per query (most votes
	// first), which bounds the query cost whatever the index size.
	ixMaxVerify = 128
	// ixPerPrint is the number of offset bin pairs of one indexed print
	// that may become candidates: a copy's true offset sometimes collects
	// fewer votes than a chance one elsewhere in the same print.
	ixPerPrint = 2
	// ixChance is the number of bin pairs per query that chance alone may
	// bring to the vote threshold: a query needs at least ixMinVotes, and
	// more when the index is so large that unrelated prints collect that
	// many by chance (see chanceThreshold).
	ixChance = 16
	// A bucket holding more than ixFullMean times the mean number of
	// entries per key, plus ixFullMin, is skipped by queries: a key that
	// many windows share (a stationary stretch common to many clips) carries
	// no information, and its entries would dominate the query cost.
	ixFullMean = 8
	ixFullMin  = 64
	// ixPreMargin is how far above MaxBER the half-sample estimate of a
	// candidate may come and still be verified in full (see verifyBelow).
	ixPreMargin = 0.05
	// ixQueryStride: the query probes every ixQueryStride-th frame.
	ixQueryStride = 1
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
	table []int64
	nbits []int64
	shift []int
	q64   []uint64    // query words in pairs
	d64   [2][]uint64 // indexed words in pairs from an even and an odd start
	qm    []uint64    // live masks of the query pairs (all ones: live)
	dm    [2][]uint64 // live masks of the indexed pairs
}

// Match is one indexed print found near a query.
type Match struct {
	ID string
	// Offset is the frame offset of the best alignment: indexed frame =
	// query frame + Offset (times Print.Hop seconds).
	Offset int
	// BER is the verified bit error rate along the best line.
	BER float64
	// Bits is the number of bits compared along the best line (live words
	// of both prints only); Threshold the decision threshold for that many
	// (see Threshold).
	Bits      int
	Threshold float64
	// Votes is the number of hash hits that proposed the candidate, in its
	// two best neighbouring offset bins (each counted up to 255).
	Votes int
}

// Index finds near-duplicates of a print among the prints added to it, by
// bit-sampling hash tables and offset voting, then verifying the best
// candidates by their bit error rate. Memory is about ixTables·4/ixStride
// bytes (8 when print number and frame need more than 32 bits) plus 4
// bytes per indexed frame; each Searcher adds 1 byte per indexed print and
// 16-frame offset bin. Add and Index.Query are not safe for
// concurrent use; for parallel queries give each goroutine a Searcher.
type Index struct {
	MaxBER float64 // 0 means DefaultMaxBER

	ids    []string
	prints [][]uint32
	dead   [][]bool
	// pat[t] lists the (frame offset, bit) pairs table t samples.
	pat   [ixTables][ixKeyBits]struct{ dt, bit uint8 }
	start [ixTables][]uint32 // bucket directory: 2^ixKeyBits + 1 offsets
	// Entries print<<fb | frame/ixStride, grouped by key: 4 bytes each
	// when that fits in 32 bits (ent32), else 8 (ent64).
	ent32  [ixTables][]uint32
	ent64  [ixTables][]uint64
	fb     uint
	wide   bool // use ent64 even when 32 bits would do (for tests)
	built  int  // number of prints in the tables
	maxLen int  // longest indexed print, frames
	full   int  // bucket size above which queries skip a key
	def    *Searcher
}

// Searcher queries an Index with its own scratch space. Several searchers
// of one index may run concurrently, as long as nothing is added to the
// index meanwhile.
type Searcher struct {
	ix    *Index
	votes []uint8
	keys  []uint32
	mark  []bool
	hot   []int32
	cands []cand
	vs    verifier
}

// NewSearcher builds the index's tables (if prints were added since) and
// returns a searcher for it.
func (ix *Index) NewSearcher() *Searcher {
	ix.build()
	return &Searcher{ix: ix}
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
		n += 4*len(ix.ent32[t]) + 8*len(ix.ent64[t]) + 4*len(ix.start[t])
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
	ix.dead = append(ix.dead, p.Dead)
	ix.maxLen = max(ix.maxLen, len(p.Words))
}

func (ix *Index) key(t int, w []uint32, f int) uint32 {
	var k uint32
	win := w[f : f+ixSpan]
	for i, pb := range &ix.pat[t] {
		k |= (win[pb.dt%ixSpan] >> (pb.bit % 32) & 1) << i
	}
	return k
}

// build (re)builds the tables by counting sort on the key, and sets the
// over-full bucket limit.
func (ix *Index) build() {
	if ix.built == len(ix.ids) {
		return
	}
	const nk = 1 << ixKeyBits
	n := 0
	stored := make([][]bool, len(ix.prints))
	for pi, w := range ix.prints {
		stored[pi] = liveWindows(ix.dead[pi], len(w), ixStride)
		for _, ok := range stored[pi] {
			if ok {
				n++
			}
		}
	}
	keys := make([]uint16, n)
	ix.fb = uint(bits.Len(uint(max(ix.maxLen-ixSpan, 0) / ixStride)))
	wide := ix.wide || bits.Len(uint(len(ix.prints)))+int(ix.fb) > 32
	for t := range ixTables {
		cnt := make([]uint32, nk+1)
		i := 0
		for pi, w := range ix.prints {
			for f := 0; f+ixSpan <= len(w); f += ixStride {
				if !stored[pi][f/ixStride] {
					continue
				}
				k := ix.key(t, w, f)
				keys[i] = uint16(k)
				cnt[k+1]++
				i++
			}
		}
		for k := 1; k <= nk; k++ {
			cnt[k] += cnt[k-1]
		}
		ix.start[t] = cnt
		if wide {
			ix.ent64[t] = fillEntries(ix.ent64[t], ix.prints, stored, keys, cnt, ix.fb)
			ix.ent32[t] = nil
		} else {
			ix.ent32[t] = fillEntries(ix.ent32[t], ix.prints, stored, keys, cnt, ix.fb)
			ix.ent64[t] = nil
		}
	}
	ix.full = ixFullMean*n/nk + ixFullMin
	ix.built = len(ix.ids)
}

// Query returns the indexed prints whose verified BER against p is at or
// below MaxBER, best first (ties by id). Prints shorter than one key window
// (ixSpan frames, about 1 s) are never matched. It panics if prints were
// added to the index after the searcher was made.
func (s *Searcher) Query(p Print) []Match {
	ix := s.ix
	if ix.built != len(ix.ids) {
		panic("neardup: Searcher used after Index.Add; make a new searcher")
	}
	w := p.Words
	if len(w) < ixSpan || len(ix.ids) == 0 {
		return nil
	}
	// Dense saturating vote counters, one row of offset bins per indexed
	// print; offset = indexed frame − query frame ∈ (−len(w), maxLen). The
	// array is all zero between queries.
	nb := (len(w)+ix.maxLen)/ixBin + 2
	np := len(ix.prints)
	if need := nb * np; cap(s.votes) < need {
		s.votes = make([]uint8, need)
	} else {
		s.votes = s.votes[:need]
	}
	votes := s.votes
	// The query's keys, and the number of hits they will give.
	nq := (len(w)-ixSpan)/ixQueryStride + 1
	if cap(s.keys) < ixTables*nq {
		s.keys = make([]uint32, ixTables*nq)
	}
	keys := s.keys[:ixTables*nq]
	hits := 0
	qlive := liveWindows(p.Dead, len(w), ixQueryStride)
	for t := range ixTables {
		st := ix.start[t]
		for i := range nq {
			if !qlive[i] {
				keys[t*nq+i] = noKey
				continue
			}
			k := ix.key(t, w, i*ixQueryStride)
			keys[t*nq+i] = k
			if n := int(st[k+1] - st[k]); n <= ix.full {
				hits += n
			}
		}
	}
	// Votes a candidate needs: at least ixMinVotes, and more than chance
	// would give any of the cells if the hits fell at random. A bin pair
	// reaching need has a bin of at least h = ⌈need/2⌉; the voting lists
	// the prints with such a bin.
	need := chanceThreshold(2*float64(hits)/float64(nb*np), nb*np)
	h := uint8((need + 1) / 2)
	if cap(s.mark) < np {
		s.mark = make([]bool, np)
	}
	mark := s.mark[:np]
	s.hot = s.hot[:0]
	for t := range ixTables {
		kt := keys[t*nq : (t+1)*nq]
		if ix.ent64[t] != nil {
			s.hot = vote(votes, ix, t, len(w), kt, ix.ent64[t], nb, h, mark, s.hot)
		} else {
			s.hot = vote(votes, ix, t, len(w), kt, ix.ent32[t], nb, h, mark, s.hot)
		}
	}
	// Best bin pair per listed print.
	cands := s.cands[:0]
	for _, pi := range s.hot {
		mark[pi] = false
		row := votes[int(pi)*nb : (int(pi)+1)*nb]
		for range ixPerPrint {
			bv, bj := bestPair(row, need)
			if bv < need {
				break
			}
			cands = append(cands, cand{int(pi), bj*ixBin - len(w) + ixBin, bv})
			clear(row[max(bj-1, 0):min(bj+3, nb)])
		}
	}
	clear(votes)
	// Only the ixMaxVerify with most votes are verified: drop those below
	// the ixMaxVerify-th count before sorting.
	if len(cands) > ixMaxVerify {
		var hist [2*255 + 1]int
		for _, c := range cands {
			hist[c.votes]++
		}
		cut, k := len(hist)-1, 0
		for ; cut > 0 && k+hist[cut] < ixMaxVerify; cut-- {
			k += hist[cut]
		}
		kept := cands[:0]
		for _, c := range cands {
			if c.votes >= cut {
				kept = append(kept, c)
			}
		}
		cands = kept
	}
	slices.SortFunc(cands, func(a, b cand) int {
		if a.votes != b.votes {
			return b.votes - a.votes
		}
		return a.pi - b.pi
	})
	s.cands = cands
	if len(cands) > ixMaxVerify {
		cands = cands[:ixMaxVerify]
	}
	maxBER := ix.MaxBER
	if maxBER == 0 {
		maxBER = DefaultMaxBER
	}
	// A print may be a candidate at two offsets; it is one match, at the
	// more significant of the two (lowest BER − threshold; the first, with
	// more votes, on a tie).
	var out []Match
	at := map[int]int{} // print → its match in out
	for _, c := range cands {
		e, n, off := s.vs.verifyBelow(p, Print{Words: ix.prints[c.pi], Dead: ix.dead[c.pi]}, c.off, maxBER)
		th := Threshold(n, maxBER)
		if n == 0 || e > th {
			continue
		}
		m := Match{ID: ix.ids[c.pi], Offset: off, BER: e, Votes: c.votes, Bits: n, Threshold: th}
		if k, ok := at[c.pi]; !ok {
			at[c.pi] = len(out)
			out = append(out, m)
		} else if e-th < out[k].BER-out[k].Threshold {
			out[k] = m
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

// bestPair returns the largest sum of two neighbouring counters,
// row[j] + row[j+1], and the first j that has it, when that sum is at least
// need; otherwise a smaller sum. A pair reaching need has a counter of at
// least h = ⌈need/2⌉, so 8-counter words with none are skipped (SWAR: a
// byte v ≥ h sets its top bit in v + 128 − h or has it set already; a
// carry out of a byte can only add false positives).
func bestPair(row []uint8, need int) (bv, bj int) {
	nb := len(row)
	h := (need + 1) / 2
	const ones, tops = 0x0101010101010101, 0x8080808080808080
	add := ones * uint64(128-min(max(h, 1), 127))
	i := 0
	if h <= 127 {
		for ; i+8 <= nb; i += 8 {
			if x := binary.LittleEndian.Uint64(row[i:]); (x+add|x)&tops != 0 {
				for j := max(i-1, 0); j < min(i+8, nb-1); j++ {
					if v := int(row[j]) + int(row[j+1]); v > bv {
						bv, bj = v, j
					}
				}
			}
		}
	}
	for j := max(i-1, 0); j < nb-1; j++ {
		if v := int(row[j]) + int(row[j+1]); v > bv {
			bv, bj = v, j
		}
	}
	return bv, bj
}

// fillEntries lays out one table's entries, print<<fb | frame/ixStride,
// grouped by key: keys holds every stored window's key in print and frame
// order, start the bucket directory.
func fillEntries[E uint32 | uint64](dst []E, prints [][]uint32, stored [][]bool, keys []uint16, start []uint32, fb uint) []E {
	const nk = 1 << ixKeyBits
	n := int(start[nk])
	if cap(dst) < n {
		dst = make([]E, n)
	}
	dst = dst[:n]
	pos := make([]uint32, nk)
	copy(pos, start[:nk])
	i := 0
	for pi, w := range prints {
		for f := 0; f+ixSpan <= len(w); f += ixStride {
			if !stored[pi][f/ixStride] {
				continue
			}
			k := keys[i]
			dst[pos[k]] = E(pi)<<fb | E(f/ixStride)
			pos[k]++
			i++
		}
	}
	return dst
}

// vote adds the hits of a query of n frames in table t to the counters
// (rows of nb offset bins per print; offset + n = indexed frame − query
// frame + n ≥ 0), keys[i] being the key of query frame i·ixQueryStride.
// Over-full buckets are skipped. A print whose counter reaches h is marked
// and appended to hot, which is returned.
func vote[E uint32 | uint64](votes []uint8, ix *Index, t, n int, keys []uint32, ent []E, nb int, h uint8, mark []bool, hot []int32) []int32 {
	st := ix.start[t]
	fb := ix.fb
	fm := E(1)<<fb - 1
	for i, k := range keys {
		if k == noKey {
			continue // a window with silent frames
		}
		bucket := ent[st[k]:st[k+1]]
		if len(bucket) > ix.full {
			continue // a key shared by too many windows says nothing
		}
		base := uint(n - i*ixQueryStride)
		for _, e := range bucket {
			pi := uint(e >> fb)
			c := pi*uint(nb) + (uint(e&fm)*ixStride+base)/ixBin
			if v := votes[c]; v < 255 {
				votes[c] = v + 1
				if v+1 == h && !mark[pi] {
					mark[pi] = true
					hot = append(hot, int32(pi))
				}
			}
		}
	}
	return hot
}

// chanceThreshold returns the smallest vote count m ≥ ixMinVotes for which
// cells·P(X ≥ m) ≤ ixChance, X Poisson with mean mu: the count that chance
// alone (hits spread uniformly over the cells) would bring fewer than
// ixChance bin pairs to.
func chanceThreshold(mu float64, cells int) int {
	m := ixMinVotes
	for m < 2*255 && float64(cells)*poissonTail(mu, m) > ixChance {
		m++
	}
	return m
}

// poissonTail returns P(X ≥ m) for X Poisson with mean mu > 0 (summed from
// m upward in log space, so a small tail keeps its precision).
func poissonTail(mu float64, m int) float64 {
	if mu <= 0 {
		return 0
	}
	lg, _ := math.Lgamma(float64(m) + 1)
	lp := -mu + float64(m)*math.Log(mu) - lg // log P(X = m)
	var s float64
	for i := m; ; i++ {
		p := math.Exp(lp)
		s += p
		if float64(i) > mu && p <= 1e-12*s {
			return min(s, 1)
		}
		lp += math.Log(mu / float64(i+1))
	}
}

// verify scores a candidate alignment. The query q is cut into ixBlock-frame
// blocks and each block's BER against d is tabled for every offset within
// ±ixDrift of off (indexed frame = query frame + offset). The score is the
// most significant straight line through that table,
//
//	o(b) = o0 + ρ·(centre of block b − centre of q),  |o0 − off| ≤ ixDrift,
//	ρ ∈ {−0.03, −0.025, …, 0.03},
//
// i.e. a constant offset plus the linear drift of a speed change up to ±3 %:
// the line with the lowest BER − Threshold(bits compared, maxBER). Its BER
// (over the live bits of its blocks) and bits are returned with the offset
// at the query's centre. Blocks the line leaves the table or the indexed
// print for are skipped; a line needs half the blocks. With none it
// returns 1.
func (vs *verifier) verify(q, d Print, off int, maxBER float64) (float64, int, int) {
	return vs.score(q, d, off, 1, maxBER)
}

// verifyBelow is verify for a caller that only needs matches. It first
// scores the candidate on every second pair of frames (half the bit
// comparisons) and returns 1 when that estimate exceeds its threshold by
// more than ixPreMargin; otherwise it returns verify's result. A match's
// line has a half-sample BER within far less than the margin of its full
// one, since the bit errors of neighbouring frames are close, so the
// estimate's most significant line is at most that margin above its
// threshold.
func (vs *verifier) verifyBelow(q, d Print, off int, maxBER float64) (float64, int, int) {
	if e, n, _ := vs.score(q, d, off, 2, maxBER); n == 0 || e > Threshold(n, maxBER)+ixPreMargin {
		return 1, 0, off
	}
	return vs.score(q, d, off, 1, maxBER)
}

// score is verify comparing every step-th pair of frames of each block. It
// returns the BER along the best line, the number of bits compared along
// it and the offset at the query's centre. Only live words of both prints
// are compared; a block counts towards a line when at least half its bits
// were compared.
func (vs *verifier) score(qp, dp Print, off, step int, maxBER float64) (float64, int, int) {
	q, d := qp.Words, dp.Words
	nb := len(q) / ixBlock
	if nb == 0 {
		return 1, 0, off
	}
	const no = 2*ixDrift + 1
	mid := float64(len(q)) / 2
	// The tables have pad unused columns either side, wide enough for the
	// largest shift of a line, so the line search needs no bounds tests. A
	// table cell holds 1<<32 + the count of differing bits when the block
	// fits in d with half its bits live, else 0; nbits the bits compared.
	// Summing cells along a line gives the number of blocks in the high
	// half and their differing bits in the low half.
	pad := int(math.Ceil(0.03*mid)) + 1
	wd := no + 2*pad
	if cap(vs.table) < nb*wd {
		vs.table = make([]int64, nb*wd)
		vs.nbits = make([]int64, nb*wd)
	}
	if cap(vs.shift) < nb {
		vs.shift = make([]int, nb)
	}
	table := vs.table[:nb*wd]
	nbits := vs.nbits[:nb*wd]
	shift := vs.shift[:nb]
	clear(table)
	clear(nbits)
	// Words in pairs, so that one 64-bit popcount compares two frames; d
	// is paired from both parities, as a block may start at any frame.
	vs.q64 = pairWords(vs.q64, q[:nb*ixBlock])
	vs.d64[0] = pairWords(vs.d64[0], d)
	vs.d64[1] = pairWords(vs.d64[1], d[min(1, len(d)):])
	masked := qp.Dead != nil || dp.Dead != nil
	if masked {
		vs.qm = pairMask(vs.qm, qp.Dead, nb*ixBlock, 0)
		vs.dm[0] = pairMask(vs.dm[0], dp.Dead, len(d), 0)
		vs.dm[1] = pairMask(vs.dm[1], dp.Dead, len(d), min(1, len(d)))
	}
	full := int64(64 * ((ixBlock/2 + step - 1) / step))
	liveBlocks := 0
	for b := range nb {
		row := table[b*wd+pad : b*wd+pad+no]
		nrow := nbits[b*wd+pad : b*wd+pad+no]
		blk := vs.q64[b*ixBlock/2 : (b+1)*ixBlock/2]
		if masked {
			qm := vs.qm[b*ixBlock/2 : (b+1)*ixBlock/2]
			live := int64(0)
			for i := 0; i < len(qm); i += step {
				live += int64(bits.OnesCount64(qm[i]))
			}
			if 2*live < full {
				continue // a mostly silent block of the query
			}
		}
		liveBlocks++
		for j := range row {
			lo := b*ixBlock + off - ixDrift + j
			if lo < 0 || lo+ixBlock > len(d) {
				continue
			}
			dd := vs.d64[lo&1][lo>>1:]
			dd = dd[:len(blk)]
			diff, n := 0, full
			if masked {
				qm := vs.qm[b*ixBlock/2 : (b+1)*ixBlock/2]
				dm := vs.dm[lo&1][lo>>1:]
				dm = dm[:len(blk)]
				n = 0
				for i := 0; i < len(blk); i += step {
					m := qm[i] & dm[i]
					diff += bits.OnesCount64((blk[i] ^ dd[i]) & m)
					n += int64(bits.OnesCount64(m))
				}
				if 2*n < full {
					continue
				}
			} else {
				for i := 0; i < len(blk); i += step {
					diff += bits.OnesCount64(blk[i] ^ dd[i])
				}
			}
			row[j] = 1<<32 | int64(diff)
			nrow[j] = n
		}
	}
	// The line kept is the most significant one: the lowest BER − T(bits),
	// T the threshold for the bits the line compared (Threshold), so a line
	// over a few well-matching blocks does not beat a longer one that is
	// as telling, nor the reverse.
	var bestDiff, bestBits int64
	bestSig := math.Inf(1)
	bestOff := off
	for r := -6; r <= 6; r++ {
		rho := 0.005 * float64(r)
		for b := range shift {
			shift[b] = b*wd + pad + int(math.Round(rho*(float64(b*ixBlock+ixBlock/2)-mid)))
		}
		for j0 := range no {
			var sum, nsum int64
			for _, sb := range shift {
				sum += table[sb+j0]
				nsum += nbits[sb+j0]
			}
			n, diff := sum>>32, sum&(1<<32-1)
			if 2*n < int64(liveBlocks) || n == 0 || nsum == 0 {
				continue
			}
			e := float64(diff) / float64(nsum)
			if sig := e - Threshold(int(nsum)*step, maxBER); sig < bestSig {
				bestSig, bestDiff, bestBits, bestOff = sig, diff, nsum, off-ixDrift+j0
			}
		}
	}
	if bestBits == 0 {
		return 1, 0, off
	}
	return float64(bestDiff) / float64(bestBits), int(bestBits) * step, bestOff
}

// pairMask packs the live masks of words from, from+2, … (n words in all
// from the start of the print) as pairWords packs the words: all ones for
// a live word, zero for a dead one.
func pairMask(dst []uint64, dead []bool, n, from int) []uint64 {
	m := (n - from) / 2
	if m < 0 {
		m = 0
	}
	if cap(dst) < m {
		dst = make([]uint64, m)
	}
	dst = dst[:m]
	for i := range dst {
		var v uint64
		if dead == nil || !dead[from+2*i] {
			v |= 0xFFFFFFFF
		}
		if dead == nil || !dead[from+2*i+1] {
			v |= 0xFFFFFFFF << 32
		}
		dst[i] = v
	}
	return dst
}

// noKey marks a query window that holds a dead word.
const noKey = 1<<32 - 1

// liveWindows returns, for the key windows starting every stride-th word
// of a print of n words, whether the window holds only live words.
func liveWindows(dead []bool, n, stride int) []bool {
	if n < ixSpan {
		return nil
	}
	out := make([]bool, (n-ixSpan)/stride+1)
	if dead == nil {
		for i := range out {
			out[i] = true
		}
		return out
	}
	pre := make([]int, n+1)
	for i, d := range dead {
		pre[i+1] = pre[i]
		if d {
			pre[i+1]++
		}
	}
	for i := range out {
		f := i * stride
		out[i] = pre[f+ixSpan] == pre[f]
	}
	return out
}

// pairWords packs w[2i] and w[2i+1] into the low and high halves of dst[i]
// (an odd last word is dropped) and returns dst.
func pairWords(dst []uint64, w []uint32) []uint64 {
	n := len(w) / 2
	if cap(dst) < n {
		dst = make([]uint64, n)
	}
	dst = dst[:n]
	for i := range dst {
		dst[i] = uint64(w[2*i]) | uint64(w[2*i+1])<<32
	}
	return dst
}
