// OUT/features/index.csv: one row per clip, written at the end of the stage
// and read back by the next run to reuse unchanged features.

package features

import (
	"bytes"
	"encoding/csv"
	"io"
	"math"
	"os"
	"strconv"

	"thrum/machine"
)

type indexRow struct {
	in               Input
	npy, npySHA, env string
	frames, bands    int
	envBinHz         float64
	sum              Summary
}

var indexHeader = []string{"path", "audio", "audio_sha256", "features_sha256", "machine", "condition", "split", "origin", "label",
	"frames", "bands", "envelope", "envelope_bin_hz", "rms_dbfs", "peak_dbfs", "crest_db", "kurtosis", "centroid_hz", "flatness_db"}

func writeIndex(file string, all []fileResult) error {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(indexHeader)
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 8, 64) }
	for _, r := range all {
		ro := r.row
		w.Write([]string{ro.npy, ro.in.Path, ro.in.SHA256, ro.npySHA, ro.in.Machine, ro.in.Condition, string(ro.in.Split), string(ro.in.Origin), string(ro.in.Label),
			strconv.Itoa(ro.frames), strconv.Itoa(ro.bands), ro.env, f(ro.envBinHz), f(finite(ro.sum.RMSdBFS)), f(finite(ro.sum.PeakdBFS)),
			f(finite(ro.sum.CrestDB)), f(finite(ro.sum.Kurtosis)), f(finite(ro.sum.CentroidHz)), f(finite(ro.sum.FlatnessDB))})
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return err
	}
	return machine.WriteFileAtomic(file, buf.Bytes())
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

// readIndexFrom reads a previous index.csv for reuse: audio path → its
// audio and feature hashes. An index it cannot read, or without those
// columns, gives nothing to reuse (every feature is recomputed), never an
// error.
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
	for _, k := range []string{"audio", "audio_sha256", "features_sha256"} {
		if _, ok := col[k]; !ok {
			return out
		}
	}
	for _, r := range recs[1:] {
		if len(r) != len(recs[0]) {
			continue
		}
		out[r[col["audio"]]] = &indexRow{in: Input{Path: r[col["audio"]], SHA256: r[col["audio_sha256"]]}, npySHA: r[col["features_sha256"]]}
	}
	return out
}
