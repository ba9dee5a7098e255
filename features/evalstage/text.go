package evalstage

import (
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"

	"thrum/features"
)

// num writes a metric with three decimals, "—" without a value.
func num(n Num) string {
	if !n.Valid() {
		return "—"
	}
	return strconv.FormatFloat(float64(n), 'f', 3, 64)
}

// signed writes a difference with its sign.
func signed(n Num) string {
	if !n.Valid() {
		return "—"
	}
	return strings.Replace(strconv.FormatFloat(float64(n), 'f', 3, 64), "-", "−", 1)
}

func withCI(n Num, iv [2]Num, f func(Num) string) string {
	if !n.Valid() {
		return "—"
	}
	if !iv[0].Valid() || !iv[1].Valid() {
		return f(n) + " [—]"
	}
	return fmt.Sprintf("%s [%s, %s]", f(n), f(iv[0]), f(iv[1]))
}

func plus(n Num) string {
	s := signed(n)
	if n.Valid() && float64(n) >= 0 {
		return "+" + s
	}
	return s
}

func scopeName(r Result) string {
	switch {
	case r.Scope == "machine":
		return "all"
	case r.HoldOut:
		return r.Condition + " (hold-out)"
	}
	return r.Condition
}

// Tables returns the summary's tables as text cells: the AUC, the partial
// AUC, the proxy scores (when any), and the credibility measures. The
// command prints them and the report shows them.
func (s *Summary) Tables() []features.ReportTable {
	iv := fmt.Sprintf("%g %% intervals from %d group-bootstrap resamples, seed %d", 100*s.Level, s.Rounds, s.Seed)
	head := []string{"machine", "condition", "detector", "normal/anomalous (groups)", "training", "recorded only", "with training set", "difference"}
	metricRows := func(rs func(MachineSummary) []Result, auc bool) [][]string {
		var rows [][]string
		for _, m := range s.Machines {
			for _, r := range rs(m) {
				if len(r.Sets) == 0 {
					continue
				}
				base := r.Sets[0]
				n := fmt.Sprintf("%d/%d (%d/%d)", r.Normal, r.Anomalous, r.NormalGroups, r.AnomalousGroups)
				for _, st := range r.Sets[1:] {
					d := Diff{AUC: NaN, AUCCI: [2]Num{NaN, NaN}, PAUC: NaN, PAUCCI: [2]Num{NaN, NaN}}
					if st.VsRecorded != nil {
						d = *st.VsRecorded
					}
					if auc {
						rows = append(rows, []string{m.Machine, scopeName(r), r.Detector, n, st.Set,
							withCI(base.AUC, base.AUCCI, num), withCI(st.AUC, st.AUCCI, num), withCI(d.AUC, d.AUCCI, plus)})
					} else {
						rows = append(rows, []string{m.Machine, scopeName(r), r.Detector, n, st.Set,
							withCI(base.PAUC, base.PAUCCI, num), withCI(st.PAUC, st.PAUCCI, num), withCI(d.PAUC, d.PAUCCI, plus)})
					}
				}
			}
		}
		return rows
	}
	real := func(m MachineSummary) []Result { return m.Results }
	proxy := func(m MachineSummary) []Result { return m.Proxy }
	tabs := []features.ReportTable{
		{Title: "AUC on real anomalies", Header: head, Rows: metricRows(real, true),
			Note: "Recorded eval and test clips; \"all\" pools the conditions with training clips, hold-out conditions are the domain-shift case. " + iv + "; the difference's interval comes from the same resamples. 0.5 is chance."},
		{Title: fmt.Sprintf("Partial AUC on real anomalies (FPR ≤ %g, area divided by %g)", s.MaxFPR, s.MaxFPR), Header: head, Rows: metricRows(real, false),
			Note: fmt.Sprintf("1 is a perfect detector at low false-alarm rates; chance is %g. %s.", s.MaxFPR/2, iv)},
	}
	if pr := metricRows(proxy, true); len(pr) > 0 {
		ph := append([]string(nil), head...)
		ph[3] = "normal/fault cues (groups)"
		tabs = append(tabs, features.ReportTable{Title: "PROXY AUC: synthetic fault cues, not real anomalies", Header: ph, Rows: pr,
			Note: "Only for scopes with no real anomalous clip. The cues are made from training clips the detectors have seen: a check that the detectors react to the cues, not an estimate of performance on real faults."})
	}
	if sr := metricRows(func(m MachineSummary) []Result { return m.Shift }, true); len(sr) > 0 {
		sh := append([]string(nil), head...)
		sh[3] = "trained-condition/hold-out normals (groups)"
		tabs = append(tabs, features.ReportTable{Title: "Domain shift: hold-out normal clips against the trained conditions' normal clips (AUC)", Header: sh, Rows: sr,
			Note: "For a hold-out condition without real anomalies: how readily the detector takes the unseen operating point for an anomaly. 0.5: it scores the hold-out's normal clips like the trained conditions' ones; 1: it flags every one of them. Lower is better; a negative difference means the variants made the unseen condition look more normal."})
	}
	var cred, between, worst [][]string
	for _, m := range s.Machines {
		for _, c := range m.Credibility.Conditions {
			name := c.Condition
			if c.HoldOut {
				name += " (hold-out)"
			}
			cred = append(cred, []string{m.Machine, name, fmt.Sprintf("%d/%d/%d", c.Recorded, c.Variants, c.EvalNorm),
				num(c.FrechetVariants), num(c.FrechetEval), num(c.OutlierMedian), num(c.OutlierMax), strconv.Itoa(c.Outliers)})
		}
		for _, p := range m.Credibility.Between {
			between = append(between, []string{m.Machine, p.A, p.B, num(p.Frechet)})
		}
		for _, v := range m.Credibility.Worst {
			worst = append(worst, []string{m.Machine, v.Condition, num(v.Score), strings.Join(v.Steps, ", "), v.Path})
		}
	}
	var notes [][]string
	for _, m := range s.Machines {
		for _, n := range m.Notes {
			notes = append(notes, []string{m.Machine, n})
		}
	}
	tabs = append(tabs,
		features.ReportTable{Title: "Notes", Header: []string{"machine", "note"}, Rows: notes},
		features.ReportTable{Title: "Credibility of the variants", Rows: cred,
			Header: []string{"machine", "condition", "recorded/variants/eval normals", "Fréchet recorded–variants", "Fréchet recorded–eval normals", "outlier median", "outlier max", fmt.Sprintf("outliers > %g", OutlierThreshold)},
			Note:   "Squared Fréchet distances between Gaussian fits of clip embeddings (per-band mean and spread of the log-mel). Variants closer to the recordings than the eval recordings are stay within the real spread of the condition. Outlier score: distance to the nearest recorded training clip over the recordings' own typical nearest-neighbour distance; about 1 is typical."},
		features.ReportTable{Title: "How far the real conditions lie apart", Rows: between,
			Header: []string{"machine", "condition", "condition", "Fréchet between recorded normals"}},
		features.ReportTable{Title: "Variants farthest from the recordings", Rows: worst,
			Header: []string{"machine", "condition", "outlier score", "steps", "variant"}},
	)
	return tabs
}

// WriteText writes the tables for a terminal.
func (s *Summary) WriteText(w io.Writer) error {
	for i, t := range s.Tables() {
		if len(t.Rows) == 0 {
			continue
		}
		if i > 0 {
			fmt.Fprintln(w)
		}
		fmt.Fprintf(w, "%s\n", t.Title)
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, strings.Join(t.Header, "\t"))
		for _, r := range t.Rows {
			fmt.Fprintln(tw, strings.Join(r, "\t"))
		}
		if err := tw.Flush(); err != nil {
			return err
		}
		if t.Note != "" {
			fmt.Fprintf(w, "(%s)\n", t.Note)
		}
	}
	return nil
}

// Report returns the report's evaluation section.
func (s *Summary) Report() *features.EvaluationSection {
	sec := &features.EvaluationSection{
		Notes: []string{
			"Two baseline detectors (a Gaussian model of log-mel context vectors with Ledoit–Wolf shrinkage, and the nearest-neighbour distance between clip embeddings) are trained on normal training clips only, once on the recorded clips and once on the recorded clips with their variants, and score the recorded eval and test clips. A positive difference means the variants helped that detector; an interval that spans 0 means this data cannot tell.",
			"Few recordings give wide intervals: read the interval before the number. Synthetic fault cues never enter training; where there are no real anomalies the proxy table scores them instead, labelled as such. Details and limits: README, section “Does the expansion help?”; every number is in evaluate/summary.json.",
		},
	}
	for _, t := range s.Tables() {
		if len(t.Rows) > 0 {
			sec.Tables = append(sec.Tables, t)
		}
	}
	for _, m := range s.Machines {
		if m.ROC != "" {
			sec.Pictures = append(sec.Pictures, m.ROC)
		}
	}
	return sec
}
