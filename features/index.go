// OUT/features/index.csv: one row per log-mel file (a clip's features and
// each of its masked copies), written at the end of the stage and read back
// by the next run to skip clips whose audio and settings are unchanged.

package features

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"io"
	"math"
	"os"
	"strconv"

	"thrum/machine"
)

// What a feature file is for: the index's "use" column.
const (
	// UseTrainNormal: a normal training clip (recorded or augmented) or a
	// masked copy of one; the input of a detector trained on normal data
	// only.
	UseTrainNormal = "train-normal"
	// UseSyntheticAnomaly: a synthetic fault cue of the training split,
	// labelled anomalous; for outlier exposure or a supervised model, never
	// for normal-only training.
	UseSyntheticAnomaly = "synthetic-anomaly"
	// UseTrainAnomaly: a real anomalous recording in the training split
	// (the split stage never puts one there; kept apart from both above).
	UseTrainAnomaly = "train-anomaly"
	// UseEval and UseTest: every file of the eval and test splits, normal
	// and anomalous (its label column tells which).
	UseEval = "eval"
	UseTest = "test"
)

// UseOf says what a file of split sp, origin o and label l is for.
func UseOf(sp machine.Split, o machine.Origin, l machine.Label) string {
	switch {
	case sp == machine.SplitEval:
		return UseEval
	case sp == machine.SplitTest:
		return UseTest
	case o == machine.OriginSyntheticFault:
		return UseSyntheticAnomaly
	case l == machine.LabelAnomalous:
		return UseTrainAnomaly
	}
	return UseTrainNormal
}

// indexRow is one clip: its features file and, in masks, its masked copies.
type indexRow struct {
	in                       Input
	npy, npySHA, env, envSHA string
	settings                 string
	frames, bands, rate      int
	envBinHz                 float64
	sum                      Summary
	masks                    []maskRow
}

// maskRow is one masked copy of a clip's features.
type maskRow struct {
	path, sha string
	rec       MaskRecord
}

var indexHeader = []string{"path", "use", "mask_of", "mask", "audio", "audio_sha256", "features_sha256", "settings_sha256",
	"machine", "condition", "group", "source", "clip", "origin", "label", "fault_kind", "speed", "split",
	"sample_rate", "frames", "bands", "envelope", "envelope_sha256", "envelope_bin_hz",
	"rms_dbfs", "peak_dbfs", "crest_db", "kurtosis", "centroid_hz", "flatness_db"}

func indexBytes(all []fileResult) ([]byte, error) {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(indexHeader)
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 8, 64) }
	for _, r := range all {
		ro := r.row
		in := ro.in
		row := func(path, maskOf, mask, sha string) {
			w.Write([]string{path, UseOf(in.Split, in.Origin, in.Label), maskOf, mask, in.Path, in.SHA256, sha, ro.settings,
				in.Machine, in.Condition, in.Group, in.Source, strconv.Itoa(in.Clip), string(in.Origin), string(in.Label), in.FaultKind,
				f(in.Speed), string(in.Split),
				strconv.Itoa(ro.rate), strconv.Itoa(ro.frames), strconv.Itoa(ro.bands), ro.env, ro.envSHA, f(ro.envBinHz),
				f(finite(ro.sum.RMSdBFS)), f(finite(ro.sum.PeakdBFS)), f(finite(ro.sum.CrestDB)), f(finite(ro.sum.Kurtosis)),
				f(finite(ro.sum.CentroidHz)), f(finite(ro.sum.FlatnessDB))})
		}
		row(ro.npy, "", "", ro.npySHA)
		for _, m := range ro.masks {
			rec, err := json.Marshal(m.rec)
			if err != nil {
				return nil, err
			}
			row(m.path, ro.npy, string(rec), m.sha)
		}
	}
	w.Flush()
	return buf.Bytes(), w.Error()
}

func finite(x float64) float64 {
	if math.IsInf(x, -1) || math.IsNaN(x) {
		return -400
	}
	return x
}

func readIndex(file string) map[string]*indexRow {
	f, err := os.Open(file)
	if err != nil {
		return map[string]*indexRow{}
	}
	defer f.Close()
	return readIndexFrom(f)
}

// readIndexFrom reads a previous index.csv for reuse: audio path → the row
// of its features (masked copies are regenerated, not read). An index it
// cannot read, or without the columns reuse needs (an index of an older
// thrum), gives nothing to reuse (every feature is recomputed), never an
// error; so does a row with a number it cannot parse.
func readIndexFrom(r io.Reader) map[string]*indexRow {
	out := map[string]*indexRow{}
	recs, err := csv.NewReader(r).ReadAll()
	if err != nil || len(recs) == 0 {
		return out
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	for _, k := range indexHeader {
		if _, ok := col[k]; !ok {
			return out
		}
	}
rows:
	for _, r := range recs[1:] {
		if len(r) != len(recs[0]) || r[col["mask_of"]] != "" {
			continue
		}
		g := func(k string) string { return r[col[k]] }
		ro := &indexRow{in: Input{Path: g("audio"), SHA256: g("audio_sha256")}, npy: g("path"), npySHA: g("features_sha256"),
			settings: g("settings_sha256"), env: g("envelope"), envSHA: g("envelope_sha256")}
		nums := []*float64{&ro.envBinHz, &ro.sum.RMSdBFS, &ro.sum.PeakdBFS, &ro.sum.CrestDB, &ro.sum.Kurtosis, &ro.sum.CentroidHz, &ro.sum.FlatnessDB}
		for i, k := range []string{"envelope_bin_hz", "rms_dbfs", "peak_dbfs", "crest_db", "kurtosis", "centroid_hz", "flatness_db"} {
			v, err := strconv.ParseFloat(g(k), 64)
			if err != nil {
				continue rows
			}
			*nums[i] = v
		}
		if ro.rate, err = strconv.Atoi(g("sample_rate")); err != nil {
			continue
		}
		out[ro.in.Path] = ro
	}
	return out
}
