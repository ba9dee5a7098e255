package machine

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
)

// Preflight finding kinds.
const (
	PreflightSplit      = "split-infeasible"
	PreflightAnomalous  = "anomalous-groups"
	PreflightHoldOut    = "hold-out-conflict"
	PreflightHoldOutLap = "hold-out-overlap"
	PreflightBackground = "background"
	PreflightFolder     = "unknown-condition"
	PreflightRecipe     = "recipe"
	PreflightDisk       = "disk-space"
)

// PreflightReport is what Preflight found before any output is written.
// Errors make a run refuse to start; warnings are reported only.
type PreflightReport struct {
	Errors   []Problem `json:"errors"`
	Warnings []Problem `json:"warnings"`
	// EstimateBytes is the planned outputs' size (see Preflight);
	// ExistingBytes what OUT already holds; FreeBytes the free space of the
	// file system OUT would be on, −1 when unknown or no OUT was given.
	EstimateBytes int64  `json:"estimate_bytes"`
	ExistingBytes int64  `json:"existing_bytes"`
	FreeBytes     int64  `json:"free_bytes"`
	Out           string `json:"out,omitempty"`
}

// OK reports whether the plan has no error.
func (r *PreflightReport) OK() bool { return len(r.Errors) == 0 }

// Error joins the errors, one per line, for a refusing run.
func (r *PreflightReport) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "machine: preflight found %d problem(s) that would fail the run:", len(r.Errors))
	for _, p := range r.Errors {
		b.WriteString("\n  ")
		b.WriteString(p.String())
	}
	return b.String()
}

// PreflightOptions tune Preflight.
type PreflightOptions struct {
	// Out is the planned output folder; "" skips the disk-space check.
	Out string
	// Free returns the free bytes for a path (nil = FreeBytes).
	Free func(path string) int64
}

// Preflight checks a scanned plant for what would make a run fail or
// mislead, using only what Scan measured (it decodes nothing more, so it
// takes no longer than reading the backgrounds' headers and walking OUT):
//
//   - split feasibility: the normal groups of each condition that is not
//     held out against the splits with a non-zero fraction (an error, as the
//     split stage refuses it; a condition with no usable group is a survey
//     problem already), and each machine's anomalous groups against the
//     splits they go to, eval when anomalous_eval > 0 and test when it is
//     < 1 (a warning: the split stage leaves one of them without anomalies);
//   - hold-out conflicts, as warnings like the split stage's rules: a
//     training condition whose rpm lies in a hold-out condition's band
//     shares its speed (the hold-out then tests a load, not an unseen
//     speed; see Condition.SharesSpeed), and bands that only overlap keep
//     the variants out of the hold-out band but not the recorded drift;
//   - background files: exist, are regular, readable WAVs at the working
//     rate and not silent (Load checks the same; a plant from Parse has not
//     been checked);
//   - condition folders a machine's folder holds that the plant does not
//     declare (an error: their recordings would silently be left out);
//   - recipes that cannot apply: a room step for a machine without a room
//     and zone (an error), a background step in a plant without
//     backgrounds (a warning: synthesised plant noise is mixed instead);
//   - disk space, when Out is set: the estimate, less what Out already
//     holds, against the free space of the file system of Out's nearest
//     existing parent (an error when it does not fit).
//
// The estimate is an upper bound: every usable clip written once as
// recorded, every normal clip of a condition that is not held out with its
// recipe's variants and its machine's fault cues (as if every group
// trained), as 16-bit PCM, plus one log-mel array per output.
func Preflight(inv *Inventory, opt PreflightOptions) *PreflightReport {
	p, out := inv.Plant, opt.Out
	free := opt.Free
	if free == nil {
		free = FreeBytes
	}
	r := &PreflightReport{Errors: []Problem{}, Warnings: []Problem{}, FreeBytes: -1, Out: out}
	errf := func(kind string, pr Problem, format string, a ...any) {
		pr.Kind, pr.Msg = kind, fmt.Sprintf(format, a...)
		r.Errors = append(r.Errors, pr)
	}
	warnf := func(kind string, pr Problem, format string, a ...any) {
		pr.Kind, pr.Msg = kind, fmt.Sprintf(format, a...)
		r.Warnings = append(r.Warnings, pr)
	}
	for _, pr := range inv.Problems {
		switch pr.Kind {
		case PreflightFolder:
			r.Errors = append(r.Errors, pr)
		case "unknown-folder":
			r.Warnings = append(r.Warnings, pr)
		}
	}
	for i := range p.Machines {
		m := &p.Machines[i]
		f := p.Fractions(m)
		var need []string
		for _, s := range []struct {
			name string
			v    float64
		}{{"train", f.Train}, {"eval", f.Eval}, {"test", f.Test}} {
			if s.v > 0 {
				need = append(need, s.name)
			}
		}
		anomalous := map[string]bool{}
		for j := range m.Conditions {
			c := &m.Conditions[j]
			normal := map[string]bool{}
			for _, rec := range inv.Recordings {
				if rec.Machine != m.ID || rec.Condition != c.Name || !rec.Usable() {
					continue
				}
				if rec.Label == LabelAnomalous {
					anomalous[rec.Group] = true
				} else if !c.HoldOut {
					normal[rec.Group] = true
				}
			}
			if n := len(normal); n > 0 && n < len(need) {
				errf(PreflightSplit, Problem{Machine: m.ID, Condition: c.Name},
					"%d usable normal recording group(s) cannot fill the %d splits with a non-zero fraction (%s); record more sessions or set a split's fraction to 0",
					n, len(need), strings.Join(need, ", "))
			}
		}
		var aneed []string
		if f.AnomalousEval > 0 {
			aneed = append(aneed, "eval")
		}
		if f.AnomalousEval < 1 {
			aneed = append(aneed, "test")
		}
		if n := len(anomalous); n > 0 && n < len(aneed) {
			warnf(PreflightAnomalous, Problem{Machine: m.ID},
				"%d anomalous recording group(s) cannot reach both %s (anomalous_eval %g): one of them gets no real anomaly",
				n, strings.Join(aneed, " and "), f.AnomalousEval)
		}
		r.holdOut(m)
		r.recipes(p, m)
	}
	for _, b := range p.Backgrounds {
		if b.Path == "" {
			continue
		}
		if msg := checkBackground(p.Resolve(b.Path), p.SampleRate); msg != "" {
			r.Errors = append(r.Errors, Problem{Path: b.Path, Kind: PreflightBackground, Msg: "background " + b.ID + ": " + msg})
		}
	}
	r.EstimateBytes = EstimateBytes(inv)
	if out != "" {
		r.ExistingBytes = treeBytes(out)
		r.FreeBytes = free(out)
		if need := r.EstimateBytes - r.ExistingBytes; r.FreeBytes >= 0 && need > r.FreeBytes {
			r.Errors = append(r.Errors, Problem{Path: out, Kind: PreflightDisk,
				Msg: fmt.Sprintf("the planned outputs need about %s more, the file system has %s free", HumanBytes(need), HumanBytes(r.FreeBytes))})
		}
	}
	return r
}

func (r *PreflightReport) holdOut(m *Machine) {
	for i := range m.Conditions {
		h := &m.Conditions[i]
		if !h.HoldOut {
			continue
		}
		hlo, hhi := h.Band()
		for j := range m.Conditions {
			c := &m.Conditions[j]
			if c.HoldOut {
				continue
			}
			lo, hi := c.Band()
			switch {
			case c.SharesSpeed(h):
				r.Warnings = append(r.Warnings, Problem{Machine: m.ID, Condition: c.Name, Kind: PreflightHoldOut,
					Msg: fmt.Sprintf("training condition at %g rpm lies in the band of hold-out condition %q (%g rpm ± %g %%: %.6g … %.6g rpm): the hold-out tests something other than speed (a load, say), not an unseen speed", c.RPM, h.Name, h.RPM, h.BandPercent, hlo, hhi)})
			case lo <= hhi && hi >= hlo:
				r.Warnings = append(r.Warnings, Problem{Machine: m.ID, Condition: c.Name, Kind: PreflightHoldOutLap,
					Msg: fmt.Sprintf("speed band %.6g … %.6g rpm overlaps hold-out condition %q's band %.6g … %.6g rpm: variants are kept out of it, recorded speed drift is not", lo, hi, h.Name, hlo, hhi)})
			}
		}
	}
}

func (r *PreflightReport) recipes(p *Plant, m *Machine) {
	for j := range m.Conditions {
		c := &m.Conditions[j]
		rc := p.RecipeFor(m, c)
		if rc == nil || c.HoldOut {
			continue
		}
		for _, s := range rc.Steps {
			switch {
			case s.Kind == "room" && (m.Room == "" || m.Zone == "" || p.Room(m.Room) == nil || p.Zone(m.Zone) == nil):
				r.Errors = append(r.Errors, Problem{Machine: m.ID, Condition: c.Name, Kind: PreflightRecipe,
					Msg: fmt.Sprintf("recipe %q has a room step but the machine has no room and zone", rc.ID)})
			case s.Kind == "background" && len(p.Backgrounds) == 0:
				r.Warnings = append(r.Warnings, Problem{Machine: m.ID, Condition: c.Name, Kind: PreflightRecipe,
					Msg: fmt.Sprintf("recipe %q has a background step but the plant has no [[background]]: synthesised plant noise is mixed instead", rc.ID)})
			default:
				continue
			}
			break
		}
	}
}

// EstimateBytes is Preflight's upper bound on the size of a run's outputs.
func EstimateBytes(inv *Inventory) int64 {
	p := inv.Plant
	clipFrames := p.ClipFrames()
	wav := 44 + 2*clipFrames
	var total int64
	for _, rec := range inv.Recordings {
		if !rec.Usable() {
			continue
		}
		m := p.Machine(rec.Machine)
		c := m.Condition(rec.Condition)
		per := int64(1)
		if rec.Label == LabelNormal && c != nil && !c.HoldOut {
			if rc := p.RecipeFor(m, c); rc != nil {
				per += int64(rc.Variants)
			}
			if f := m.Faults; f != nil {
				per += int64(len(f.Kinds) * max(f.PerClip, 1))
			}
		}
		nfft, hop, bands := 1024, 512, 128
		for _, fc := range []*FeatureConfig{p.Features, m.Features} {
			if fc == nil {
				continue
			}
			if fc.NFFT > 0 {
				nfft = fc.NFFT
			}
			if fc.Hop > 0 {
				hop = fc.Hop
			}
			if fc.Bands > 0 {
				bands = fc.Bands
			}
		}
		frames := max(clipFrames-int64(nfft), 0)/int64(hop) + 1
		feat := 128 + 4*frames*int64(bands)
		total += int64(len(rec.Clips)) * per * (wav + feat)
	}
	return total
}

// treeBytes is the size of the regular files under dir (0 when absent).
func treeBytes(dir string) int64 {
	var n int64
	filepath.WalkDir(dir, func(_ string, d fs.DirEntry, err error) error {
		if err != nil {
			return nil
		}
		if d.Type().IsRegular() {
			if info, err := d.Info(); err == nil {
				n += info.Size()
			}
		}
		return nil
	})
	return n
}

// FreeBytes is the space available to an unprivileged user on the file
// system that holds path, or its nearest existing parent; −1 when it cannot
// be found.
func FreeBytes(path string) int64 {
	dir, err := filepath.Abs(path)
	if err != nil {
		return -1
	}
	for {
		if _, err := os.Stat(dir); err == nil {
			return freeBytes(dir)
		} else if !errors.Is(err, fs.ErrNotExist) {
			return -1
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			return -1
		}
		dir = parent
	}
}

// HumanBytes renders n in binary units (KiB, MiB, GiB, TiB).
func HumanBytes(n int64) string {
	if n < 1024 {
		return fmt.Sprintf("%d B", n)
	}
	x := float64(n)
	for _, u := range []string{"KiB", "MiB", "GiB", "TiB"} {
		x /= 1024
		if x < 1024 || u == "TiB" {
			return fmt.Sprintf("%.1f %s", x, u)
		}
	}
	return ""
}

// WriteText renders the report: the estimate, then errors and warnings.
func (r *PreflightReport) WriteText(w interface{ Write([]byte) (int, error) }) {
	free := "free space not checked (no output folder given)"
	if r.Out != "" && r.FreeBytes >= 0 {
		free = fmt.Sprintf("%s free at %s, %s already there", HumanBytes(r.FreeBytes), r.Out, HumanBytes(r.ExistingBytes))
	}
	fmt.Fprintf(w, "preflight: planned outputs about %s (upper bound); %s\n", HumanBytes(r.EstimateBytes), free)
	for _, p := range r.Errors {
		fmt.Fprintf(w, "  error: %s\n", p)
	}
	for _, p := range r.Warnings {
		fmt.Fprintf(w, "  warning: %s\n", p)
	}
	if len(r.Errors) == 0 && len(r.Warnings) == 0 {
		fmt.Fprintln(w, "  no preflight problems")
	}
}
