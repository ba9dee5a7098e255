package machine

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strings"
	"text/tabwriter"
)

// SurveyRow summarises one machine id and condition.
type SurveyRow struct {
	Machine     string  `json:"machine"`
	Condition   string  `json:"condition"`
	HoldOut     bool    `json:"hold_out,omitempty"`
	Recordings  int     `json:"recordings"`
	Anomalous   int     `json:"anomalous"`
	Unusable    int     `json:"unusable"`
	Clips       int     `json:"clips"`
	Seconds     float64 `json:"seconds"`
	SampleRates []int   `json:"sample_rates"`
	Channels    []int   `json:"channels"`
	// Level statistics over the usable recordings: RMS is the power mean,
	// peak the maximum, clipped and DC sample-weighted means.
	RMSDBFS  *float64 `json:"rms_dbfs"`
	PeakDBFS *float64 `json:"peak_dbfs"`
	Clipped  float64  `json:"clipped"`
	DC       float64  `json:"dc"`
	// The worst file of the condition by the quality gate, excluded ones
	// included: the one nearest to (or furthest beyond) a threshold, with
	// its measures. WorstScore is 1 at a threshold: the largest of
	// clipped/max_clipped, |DC|/max_dc and 10^((min_rms − RMS)/20).
	Worst        string        `json:"worst,omitempty"`
	WorstScore   float64       `json:"worst_score,omitempty"`
	WorstQuality *QualityStats `json:"worst_quality,omitempty"`
	Excluded     int           `json:"excluded"`
	Problems     int           `json:"problems"`
	// BandwidthHz is the machine's harmonised bandwidth (see Scan), 0 when
	// nothing is band-limited.
	BandwidthHz float64 `json:"bandwidth_hz,omitempty"`
}

// Score is how close a recording's quality is to the gate: 1 at a
// threshold, above 1 beyond it (see SurveyRow.WorstScore).
func (t Thresholds) Score(q *QualityStats) float64 {
	if q == nil {
		return 0
	}
	s := math.Pow(10, (t.MinRMSDBFS-q.RMSDBFS)/20)
	if t.MaxClippedPercent > 0 {
		s = math.Max(s, 100*q.Clipped/t.MaxClippedPercent)
	} else if q.Clipped > 0 {
		s = math.MaxFloat64
	}
	if t.MaxDC > 0 {
		s = math.Max(s, math.Abs(q.DC)/t.MaxDC)
	} else if q.DC != 0 {
		s = math.MaxFloat64
	}
	return s
}

// Survey is the survey report of a plant.
type Survey struct {
	Plant      string       `json:"plant"`
	Thresholds Thresholds   `json:"quality"`
	Rows       []SurveyRow  `json:"rows"`
	Problems   []Problem    `json:"problems"`
	Recordings []*Recording `json:"recordings"`
	// Preflight, when set, is rendered after the problems.
	Preflight *PreflightReport `json:"preflight,omitempty"`
}

// Summarise builds the survey report of an inventory scanned with levels.
func Summarise(inv *Inventory) *Survey {
	th := inv.Plant.Quality.Thresholds()
	s := &Survey{Plant: inv.Plant.Path, Thresholds: th, Problems: inv.Problems, Recordings: inv.Recordings}
	for i := range inv.Plant.Machines {
		m := &inv.Plant.Machines[i]
		for j := range m.Conditions {
			c := &m.Conditions[j]
			row := SurveyRow{Machine: m.ID, Condition: c.Name, HoldOut: c.HoldOut}
			rates, chans := map[int]bool{}, map[int]bool{}
			var pw, peak, w float64
			peak = math.Inf(-1)
			for _, r := range inv.Recordings {
				if r.Machine != m.ID || r.Condition != c.Name {
					continue
				}
				row.Recordings++
				if r.Label == LabelAnomalous {
					row.Anomalous++
				}
				if r.Format.SampleRate > 0 {
					rates[r.Format.SampleRate] = true
					chans[r.Format.Channels] = true
				}
				if !r.Usable() {
					row.Unusable++
				}
				if _, _, ok := r.Exclusion(); ok {
					row.Excluded++
				}
				if r.Quality != nil {
					if sc := th.Score(r.Quality); row.Worst == "" || sc > row.WorstScore {
						row.Worst, row.WorstScore, row.WorstQuality = r.Rel, sc, r.Quality
					}
				}
				if r.Err != nil {
					continue
				}
				row.BandwidthHz = max(row.BandwidthHz, r.BandwidthHz)
				row.Clips += len(r.Clips)
				row.Seconds += r.Seconds
				if lv := r.Levels; lv != nil {
					n := float64(r.Frames * int64(r.Format.Channels))
					pw += math.Pow(10, lv.RMSDBFS/10) * n
					w += n
					peak = math.Max(peak, lv.PeakDBFS)
					row.Clipped += lv.Clipped * n
					row.DC += lv.DC * n
				}
			}
			if w > 0 {
				rms := DB(pw / w)
				row.RMSDBFS, row.PeakDBFS = &rms, &peak
				row.Clipped /= w
				row.DC /= w
			}
			row.SampleRates, row.Channels = keys(rates), keys(chans)
			for _, p := range inv.Problems {
				if p.Machine == m.ID && p.Condition == c.Name {
					row.Problems++
				}
			}
			s.Rows = append(s.Rows, row)
		}
	}
	return s
}

func keys(m map[int]bool) []int {
	out := make([]int, 0, len(m))
	for k := range m {
		out = append(out, k)
	}
	sort.Ints(out)
	return out
}

func ints(v []int) string {
	s := make([]string, len(v))
	for i, x := range v {
		s[i] = fmt.Sprint(x)
	}
	if len(s) == 0 {
		return "-"
	}
	return strings.Join(s, ",")
}

func dbfs(x *float64) string {
	if x == nil || math.IsInf(*x, 0) {
		return "-"
	}
	return fmt.Sprintf("%.1f", *x)
}

// WriteText renders the survey as a table followed by the problems.
func (s *Survey) WriteText(w io.Writer) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "machine\tcondition\trec\tanom\texcl\tclips\tminutes\trate Hz\tch\tRMS dBFS\tpeak dBFS\tclipped %\tDC\tproblems\tworst file (clipped %, DC, RMS dBFS)")
	for _, r := range s.Rows {
		name := r.Condition
		if r.HoldOut {
			name += " (hold-out)"
		}
		worst := "-"
		if q := r.WorstQuality; q != nil {
			worst = fmt.Sprintf("%s (%.3f, %+.4f, %s)", r.Worst, 100*q.Clipped, q.DC, dbfs(&q.RMSDBFS))
		}
		fmt.Fprintf(tw, "%s\t%s\t%d\t%d\t%d\t%d\t%.1f\t%s\t%s\t%s\t%s\t%.3f\t%+.4f\t%d\t%s\n",
			r.Machine, name, r.Recordings, r.Anomalous, r.Excluded, r.Clips, r.Seconds/60, ints(r.SampleRates), ints(r.Channels),
			dbfs(r.RMSDBFS), dbfs(r.PeakDBFS), 100*r.Clipped, r.DC, r.Problems, worst)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	// Harmonised bandwidths, one line per machine that has one.
	done := map[string]bool{}
	for _, r := range s.Rows {
		if r.BandwidthHz == 0 || done[r.Machine] {
			continue
		}
		done[r.Machine] = true
		var rates []int
		for _, q := range s.Rows {
			if q.Machine == r.Machine {
				rates = append(rates, q.SampleRates...)
			}
		}
		set := map[int]bool{}
		for _, x := range rates {
			set[x] = true
		}
		if _, err := fmt.Fprintf(w, "\n%s: every clip low-passed to %g Hz (source rates %s Hz, resampled to the working rate)", r.Machine, r.BandwidthHz, ints(keys(set))); err != nil {
			return err
		}
	}
	if len(done) > 0 {
		fmt.Fprintln(w)
	}
	t := s.Thresholds
	fmt.Fprintf(w, "quality gate: clipped ≤ %g %% (flat tops of ≥ %d samples within %g dB of full scale), |DC| ≤ %g, RMS ≥ %g dBFS\n",
		t.MaxClippedPercent, t.ClipRun, -t.ClipLevelDBFS, t.MaxDC, t.MinRMSDBFS)
	for _, r := range s.Recordings {
		if r.Accepted != "" {
			fmt.Fprintf(w, "accepted: %s: %s; used because: %s\n", r.Rel, r.AcceptedOver, r.Accepted)
		}
	}
	if len(s.Problems) == 0 {
		if _, err := fmt.Fprintln(w, "\nno problems found"); err != nil {
			return err
		}
	} else {
		fmt.Fprintf(w, "\n%d problem(s):\n", len(s.Problems))
		for _, p := range s.Problems {
			if _, err := fmt.Fprintf(w, "  %s\n", p); err != nil {
				return err
			}
		}
	}
	if s.Preflight != nil {
		fmt.Fprintln(w)
		s.Preflight.WriteText(w)
	}
	return nil
}

// WriteJSON renders the survey as one JSON document. Infinite levels (silent
// files) become null.
func (s *Survey) WriteJSON(w io.Writer) error {
	type recJSON struct {
		*Recording
		Error string `json:"error,omitempty"`
	}
	out := struct {
		Plant      string           `json:"plant"`
		Quality    Thresholds       `json:"quality"`
		Rows       []SurveyRow      `json:"rows"`
		Problems   []Problem        `json:"problems"`
		Preflight  *PreflightReport `json:"preflight,omitempty"`
		Recordings []recJSON        `json:"recordings"`
	}{Plant: s.Plant, Quality: s.Thresholds, Rows: s.Rows, Problems: s.Problems, Preflight: s.Preflight}
	if out.Problems == nil {
		out.Problems = []Problem{}
	}
	for _, r := range s.Recordings {
		rj := recJSON{Recording: r}
		if r.Err != nil {
			rj.Error = r.Err.Error()
		}
		if lv := r.Levels; lv != nil && (math.IsInf(lv.RMSDBFS, 0) || math.IsInf(lv.PeakDBFS, 0)) {
			c := *lv
			c.RMSDBFS, c.PeakDBFS = math.Max(c.RMSDBFS, -400), math.Max(c.PeakDBFS, -400)
			cp := *r
			cp.Levels = &c
			rj.Recording = &cp
		}
		out.Recordings = append(out.Recordings, rj)
	}
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(out)
}
