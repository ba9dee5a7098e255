package split

import (
	"fmt"
	"math"
	"sort"

	"thrum/machine"
)

// The group-level decision: which split each group goes to. It sees only
// the groups (machine id, condition, group name, whether the group holds a
// real anomalous recording, whether its condition is held out), so it gives
// the same answer from the plant and its inventory, before any file is
// written (TrainingPolicy), as from the ledgers afterwards (Assign).

// GroupInfo is one split group as the decision sees it.
type GroupInfo struct {
	Machine, Condition, Group string
	Anomalous, HoldOut        bool
}

// Decision is a group's split and the rule that chose it.
type Decision struct {
	Split  machine.Split
	Reason string
}

// PinPolicy puts one group of a machine in a fixed split.
type PinPolicy struct {
	Machine string        `json:"machine"`
	Group   string        `json:"group"`
	Split   machine.Split `json:"split"`
}

// dealOrder is the order shares are dealt in.
var dealOrder = []machine.Split{machine.SplitTrain, machine.SplitEval, machine.SplitTest}

// shareCounts returns how many of n groups go to each share: the counts
// that meet n·w as closely as whole groups allow, by largest remainder
// (Hamilton's method: floors first, the groups left over to the largest
// fractional parts, ties to the earlier share). When n is at least the
// number of non-zero shares, every non-zero share first gets one group and
// the rest is dealt by largest remainder over what each share still lacks,
// so no share with a non-zero fraction stays empty when it need not.
func shareCounts(n int, w []float64) []int {
	out := make([]int, len(w))
	if n <= 0 {
		return out
	}
	k := 0
	for _, x := range w {
		if x > 0 {
			k++
		}
	}
	if k == 0 {
		return out
	}
	d := make([]float64, len(w))
	rest := n
	if n >= k {
		rest = n - k
		sum := 0.0
		for i, x := range w {
			if x > 0 {
				out[i] = 1
				d[i] = math.Max(0, float64(n)*x-1)
				sum += d[i]
			}
		}
		for i, x := range w {
			if sum > 0 {
				d[i] = d[i] * float64(rest) / sum
			} else {
				d[i] = float64(rest) * x
			}
		}
	} else {
		for i, x := range w {
			d[i] = float64(n) * x
		}
	}
	left := n
	for i := range w {
		f := math.Floor(d[i] + 1e-9)
		out[i] += int(f)
		d[i] -= f
		left -= out[i]
	}
	idx := make([]int, 0, len(w))
	for i, x := range w {
		if x > 0 {
			idx = append(idx, i)
		}
	}
	sort.SliceStable(idx, func(a, b int) bool { return d[idx[a]] > d[idx[b]]+1e-12 })
	for j := 0; left > 0; j++ {
		out[idx[j%len(idx)]]++
		left--
	}
	return out
}

// dealCounts returns how many of the unpinned groups go to each share when
// pinned[i] groups are already fixed there: the share counts of all n
// groups, less the pinned ones; a share its pins overfill takes none and
// the surplus comes off the shares most above their exact quota.
func dealCounts(n int, w []float64, pinned []int) []int {
	t := shareCounts(n, w)
	m := n
	for _, p := range pinned {
		m -= p
	}
	u := make([]int, len(w))
	sum := 0
	for i := range w {
		u[i] = max(0, t[i]-pinned[i])
		sum += u[i]
	}
	for sum > m {
		best, over := -1, math.Inf(-1)
		for i := range w {
			if u[i] == 0 {
				continue
			}
			if o := float64(u[i]+pinned[i]) - float64(n)*w[i]; o > over+1e-12 {
				best, over = i, o
			}
		}
		u[best]--
		sum--
	}
	return u
}

// method reports whether the policy deals by shares (Method "shares") or
// by each group's own hash ("stable-hash", or empty, as plan.json files
// written before the method existed).
func (p Policy) byShares() bool { return p.Method == machine.SplitShares }

func (p Policy) pin(machineID, group string) (machine.Split, bool) {
	for _, pn := range p.Pins {
		if pn.Machine == machineID && pn.Group == group {
			return pn.Split, true
		}
	}
	return "", false
}

// Decide gives each group its split:
//   - a pinned group goes where plant.toml pins it (a real anomalous or
//     hold-out group pinned to train is an error);
//   - a group of a hold-out condition goes to test;
//   - real anomalous groups go to eval or test: with method "shares" the
//     groups of a machine that are not held out, in the order of their
//     stable hash, are dealt eval first by the counts shareCounts gives for
//     the shares anomalous_eval and 1 − anomalous_eval, so eval and test
//     each get one whenever there are two or more (and both shares are
//     non-zero); with "stable-hash" a group goes to eval when its Unit <
//     anomalous_eval;
//   - normal groups of a machine and condition: with "shares" they are
//     ordered by Unit (then name) and dealt train first, then eval, then
//     test, by the counts shareCounts gives for all of them less the pinned
//     ones; with "stable-hash" each by pick(Unit).
//
// Adding a group changes n and so may change the counts, and it takes a
// place in the hash order: with "shares" some existing groups may move to
// another split (those near a boundary of the order). "stable-hash" never
// moves a group, at the price of shares met only on average.
func (p Policy) Decide(groups []GroupInfo) (map[groupKey]Decision, error) {
	out := map[groupKey]Decision{}
	type mc struct{ machine, cond string }
	normal := map[mc][]GroupInfo{}
	anomalous := map[string][]GroupInfo{}
	for _, g := range groups {
		k := groupKey{g.Machine, g.Group}
		if _, dup := out[k]; dup {
			continue
		}
		f, err := p.FractionsFor(g.Machine)
		if err != nil {
			return nil, err
		}
		u := Unit(p.Seed, "group", g.Machine, g.Group)
		if s, ok := p.pin(g.Machine, g.Group); ok {
			if s == machine.SplitTrain && (g.Anomalous || g.HoldOut) {
				return nil, fmt.Errorf("split: machine %q: pin of group %q to train: the group holds a real anomalous recording or a hold-out condition, which never train", g.Machine, g.Group)
			}
			out[k] = Decision{s, ReasonPinned}
		}
		switch {
		case g.HoldOut:
			if _, ok := out[k]; !ok {
				out[k] = Decision{machine.SplitTest, ReasonHoldOut}
			}
		case g.Anomalous:
			if p.byShares() {
				anomalous[g.Machine] = append(anomalous[g.Machine], g)
			} else if _, ok := out[k]; !ok {
				s := machine.SplitTest
				if u < f.AnomalousEval {
					s = machine.SplitEval
				}
				out[k] = Decision{s, ReasonAnomalous}
			}
		default:
			if p.byShares() {
				normal[mc{g.Machine, g.Condition}] = append(normal[mc{g.Machine, g.Condition}], g)
			} else if _, ok := out[k]; !ok {
				out[k] = Decision{pick(u, f), ReasonHash}
			}
		}
	}
	deal := func(gs []GroupInfo, w []float64, splits []machine.Split, reason string) {
		sort.Slice(gs, func(i, j int) bool {
			ui, uj := Unit(p.Seed, "group", gs[i].Machine, gs[i].Group), Unit(p.Seed, "group", gs[j].Machine, gs[j].Group)
			if ui != uj {
				return ui < uj
			}
			return gs[i].Group < gs[j].Group
		})
		pinned := make([]int, len(splits))
		var free []GroupInfo
		for _, g := range gs {
			if d, ok := out[groupKey{g.Machine, g.Group}]; ok {
				for i, s := range splits {
					if d.Split == s {
						pinned[i]++
					}
				}
				continue
			}
			free = append(free, g)
		}
		counts := dealCounts(len(gs), w, pinned)
		i := 0
		for si, s := range splits {
			for c := 0; c < counts[si] && i < len(free); c++ {
				out[groupKey{free[i].Machine, free[i].Group}] = Decision{s, reason}
				i++
			}
		}
	}
	for _, gs := range normal {
		f, _ := p.FractionsFor(gs[0].Machine)
		deal(gs, []float64{f.Train, f.Eval, f.Test}, dealOrder, ReasonShares)
	}
	for id, gs := range anomalous {
		f, _ := p.FractionsFor(id)
		deal(gs, []float64{f.AnomalousEval, 1 - f.AnomalousEval}, []machine.Split{machine.SplitEval, machine.SplitTest}, ReasonAnomalous)
	}
	return out, nil
}

// clipKey names one clip of a recording's block.
type clipKey struct {
	machine, group string
	clip           int
}

// blockClip is one recorded clip of a block group.
type blockClip struct {
	Machine, Group string
	Clip           int
}

// guardClips returns the clips left out as guard gaps: where two
// neighbouring blocks of one recording (blocks k and k+1) go to different
// splits, the last clip of block k, so that no clip of one split is
// recorded right next to a clip of another.
func guardClips(clips []blockClip, dec map[groupKey]Decision) map[clipKey]bool {
	type rk struct{ machine, base string }
	last := map[rk]map[int]int{}
	for _, c := range clips {
		base, k, ok := machine.ParseBlock(c.Group)
		if !ok {
			continue
		}
		r := rk{c.Machine, base}
		if last[r] == nil {
			last[r] = map[int]int{}
		}
		if v, seen := last[r][k]; !seen || c.Clip > v {
			last[r][k] = c.Clip
		}
	}
	out := map[clipKey]bool{}
	for r, blocks := range last {
		for k, lc := range blocks {
			if _, ok := blocks[k+1]; !ok {
				continue
			}
			a := dec[groupKey{r.machine, machine.BlockGroup(r.base, k)}]
			b := dec[groupKey{r.machine, machine.BlockGroup(r.base, k+1)}]
			if a.Split != b.Split {
				out[clipKey{r.machine, machine.BlockGroup(r.base, k), lc}] = true
			}
		}
	}
	return out
}
