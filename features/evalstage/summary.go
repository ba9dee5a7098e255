package evalstage

import (
	"bytes"
	"encoding/json"
	"math"
	"strconv"
)

// SummaryVersion is the version of summary.json's layout; it is raised
// when a field changes meaning or goes.
const SummaryVersion = 1

// Num is a number of summary.json: six significant digits, null when it has
// no value (an AUC without anomalous clips, a distance of too few clips).
type Num float64

// NaN is the Num without a value.
var NaN = Num(math.NaN())

// Valid reports whether n has a value.
func (n Num) Valid() bool { return !math.IsNaN(float64(n)) && !math.IsInf(float64(n), 0) }

// MarshalJSON writes null for no value.
func (n Num) MarshalJSON() ([]byte, error) {
	if !n.Valid() {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, round6(float64(n)), 'g', -1, 64), nil
}

// UnmarshalJSON reads null as no value.
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = NaN
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return err
	}
	*n = Num(f)
	return nil
}

func round6(x float64) float64 {
	if x == 0 {
		return 0
	}
	v, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 6, 64), 64)
	return v
}

// Summary is OUT/evaluate/summary.json. README's "evaluate" section
// documents every field.
type Summary struct {
	Version int `json:"version"`
	// Seed is the seed every bootstrap derives from (the plant seed unless
	// given).
	Seed   uint64  `json:"seed"`
	Rounds int     `json:"bootstrap_rounds"`
	Level  float64 `json:"interval_level"`
	// MaxFPR bounds the partial AUC: area for FPR in [0, MaxFPR] / MaxFPR.
	MaxFPR       float64  `json:"pauc_max_fpr"`
	Scored       []string `json:"scored_splits"`
	PerCondition bool     `json:"per_condition"`
	Masked       bool     `json:"masked"`
	Ablate       bool     `json:"ablate"`
	// Inputs is the SHA-256 of everything the summary depends on (tool
	// version, options, features index, plan.json, the variants' step
	// kinds): a rerun with the same inputs reuses the summary.
	Inputs    string           `json:"inputs_sha256"`
	Detectors []DetectorInfo   `json:"detectors"`
	Machines  []MachineSummary `json:"machines"`
}

// DetectorInfo names a detector and its settings.
type DetectorInfo struct {
	Name   string         `json:"name"`
	Params map[string]int `json:"params"`
}

// MachineSummary is one machine's evaluation.
type MachineSummary struct {
	Machine  string        `json:"machine"`
	Training []TrainingSet `json:"training_sets"`
	// Results are real AUCs: rows whose scope holds real anomalous clips.
	Results []Result `json:"results"`
	// Proxy rows score synthetic fault cues as positives, for scopes with
	// no real anomalous clip; never an estimate on real faults.
	Proxy []Result `json:"proxy"`
	// Shift rows, for a hold-out condition without real anomalies, score
	// its normal clips (counted as Anomalous, the positives) against the
	// normal clips of the trained conditions (Normal): how far the
	// detector takes an unseen operating point for an anomaly (0.5: not
	// at all; 1: every clip of it).
	Shift       []Result    `json:"domain_shift"`
	Credibility Credibility `json:"credibility"`
	// Notes say why a number has no value (a detector that could not be
	// fitted).
	Notes []string `json:"notes"`
	// ROC is the ROC picture, relative to the output root ("" when no
	// scope had real anomalies).
	ROC string `json:"roc_picture,omitempty"`
}

// TrainingSet is one set of training clips a detector was fitted on.
type TrainingSet struct {
	Name string `json:"name"`
	// Clips counts the clips, Origins them by origin ("recorded",
	// "augmented", and "masked" for masked copies of either).
	Clips   int            `json:"clips"`
	Origins map[string]int `json:"origins"`
	// LeftOut is the step kind an ablation set leaves out, Dropped the
	// number of variants it dropped for it.
	LeftOut string `json:"left_out_kind,omitempty"`
	Dropped int    `json:"dropped_variants,omitempty"`
}

// Result is one scope (a machine's training conditions pooled, or one
// condition) scored by one detector under every training set.
type Result struct {
	// Scope is "machine" (all conditions with training clips, pooled) or
	// "condition" (then Condition names it).
	Scope     string `json:"scope"`
	Condition string `json:"condition,omitempty"`
	HoldOut   bool   `json:"hold_out"`
	Detector  string `json:"detector"`
	Proxy     bool   `json:"proxy"`
	// Normal and Anomalous count the scored clips; the groups are the
	// bootstrap's resampling units.
	Normal          int        `json:"normal"`
	Anomalous       int        `json:"anomalous"`
	NormalGroups    int        `json:"normal_groups"`
	AnomalousGroups int        `json:"anomalous_groups"`
	Sets            []SetScore `json:"sets"`
}

// SetScore is the metrics of one training set.
type SetScore struct {
	Set    string `json:"set"`
	AUC    Num    `json:"auc"`
	AUCCI  [2]Num `json:"auc_ci"`
	PAUC   Num    `json:"pauc"`
	PAUCCI [2]Num `json:"pauc_ci"`
	// VsRecorded is this set minus the recorded-only set, with intervals
	// bootstrapped on the same resamples (absent for "recorded").
	VsRecorded *Diff `json:"vs_recorded,omitempty"`
}

// Diff is a difference of metrics and its intervals.
type Diff struct {
	AUC    Num    `json:"auc"`
	AUCCI  [2]Num `json:"auc_ci"`
	PAUC   Num    `json:"pauc"`
	PAUCCI [2]Num `json:"pauc_ci"`
}

// Credibility measures how far the variants lie from the recordings.
type Credibility struct {
	// OutlierThreshold is the score above which a variant counts as an
	// outlier in Conditions.
	OutlierThreshold float64                `json:"outlier_threshold"`
	Conditions       []ConditionCredibility `json:"conditions"`
	Between          []ConditionPair        `json:"between_conditions"`
	Worst            []VariantScore         `json:"worst_variants"`
}

// ConditionCredibility is one condition's distances (squared Fréchet
// distances between Gaussian fits of clip embeddings).
type ConditionCredibility struct {
	Condition string `json:"condition"`
	HoldOut   bool   `json:"hold_out"`
	Recorded  int    `json:"recorded_train"`
	Variants  int    `json:"variants"`
	EvalNorm  int    `json:"eval_test_normal"`
	// FrechetVariants: recorded training clips vs their variants;
	// FrechetEval: recorded training clips vs recorded eval/test normals.
	FrechetVariants Num `json:"frechet_variants"`
	FrechetEval     Num `json:"frechet_eval_normal"`
	OutlierMedian   Num `json:"outlier_median"`
	OutlierMax      Num `json:"outlier_max"`
	Outliers        int `json:"outliers"`
}

// ConditionPair is the distance between two conditions' recorded normals.
type ConditionPair struct {
	A       string `json:"a"`
	B       string `json:"b"`
	Frechet Num    `json:"frechet"`
}

// VariantScore is one variant's outlier score.
type VariantScore struct {
	Path      string   `json:"path"`
	Condition string   `json:"condition"`
	Score     Num      `json:"score"`
	Steps     []string `json:"steps"`
}

// JSON returns summary.json's bytes: indented, ending in a newline.
func (s *Summary) JSON() ([]byte, error) {
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(s); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}
