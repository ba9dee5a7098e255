package machine

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
)

// Origins of a file in the dataset.
const (
	OriginRecorded       = "recorded"
	OriginAugmented      = "augmented"
	OriginSyntheticFault = "synthetic-fault"
)

// Labels.
const (
	LabelNormal    = "normal"
	LabelAnomalous = "anomalous"
)

// ToolVersion is written into every ledger line.
const ToolVersion = "thrum 0.1.0"

// Ledger line kinds.
const (
	EntryOutput   = "output"
	EntryRejected = "rejected"
)

// Entry is one line of out/<machine-id>/ledger.jsonl: everything needed to
// redo one output, or the reason a variant was not written.
type Entry struct {
	Kind string `json:"kind"` // "output" or "rejected"
	// Stage is the stage that wrote the line: expand, faults or features.
	Stage string `json:"stage"`
	// Path is the output file, relative to the output root, slash-separated.
	Path   string `json:"path,omitempty"`
	SHA256 string `json:"sha256,omitempty"`
	// Source is the source recording, relative to the recordings root.
	Source       string `json:"source"`
	SourceSHA256 string `json:"source_sha256"`
	// Clip is the clip index inside the source; ClipStart and ClipFrames
	// locate it in frames.
	Clip       int    `json:"clip"`
	ClipStart  int64  `json:"clip_start"`
	ClipFrames int64  `json:"clip_frames"`
	Machine    string `json:"machine"`
	Condition  string `json:"condition"`
	Origin     string `json:"origin"`
	Label      string `json:"label"`
	// Group is the split unit: the source recording, or its session.
	Group      string `json:"group"`
	Variant    int    `json:"variant"`
	Seed       uint64 `json:"seed"`
	SampleRate int    `json:"sample_rate"`
	// Speed is the total speed ratio applied (1 when none): the clip's actual
	// shaft rate is the condition's rpm/60 times Speed.
	Speed float64      `json:"speed"`
	Steps []StepRecord `json:"steps,omitempty"`
	// Scale is the factor applied at the end to keep the mix from clipping
	// (1 when none was needed).
	Scale float64 `json:"scale"`
	// Backgrounds lists the background ids mixed into this output.
	Backgrounds []string     `json:"backgrounds,omitempty"`
	Fault       *FaultRecord `json:"fault,omitempty"`
	Reason      string       `json:"reason,omitempty"`
	// Draw is a hash of the drawn steps: a rerun reuses an output only when
	// its draw, seed and file hash all match.
	Draw  string         `json:"draw,omitempty"`
	Tool  string         `json:"tool"`
	Extra map[string]any `json:"extra,omitempty"`
}

// StepRecord is one applied transform with its exact drawn parameters.
type StepRecord struct {
	Kind   string             `json:"kind"`
	Params map[string]float64 `json:"params,omitempty"`
	Text   map[string]string  `json:"text,omitempty"`
	// Nonphysical marks tempo and pitch, which break machine physics.
	Nonphysical bool `json:"nonphysical,omitempty"`
}

// FaultRecord labels a synthetic fault cue.
type FaultRecord struct {
	Kind string `json:"kind"`
	// Frequencies are the defect frequencies in Hz by name (bpfo, bpfi,
	// bsf, ftf, gmf, shaft, ...).
	Frequencies map[string]float64 `json:"frequencies"`
	ShaftHz     float64            `json:"shaft_hz"`
	SeverityDB  float64            `json:"severity_db"`
	ResonanceHz float64            `json:"resonance_hz,omitempty"`
	Seed        uint64             `json:"seed"`
}

// ReadLedger reads a ledger from r. name is used in error messages.
func ReadLedger(r io.Reader, name string) ([]Entry, error) {
	var out []Entry
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 64<<10), 16<<20)
	line := 0
	for sc.Scan() {
		line++
		b := sc.Bytes()
		if len(b) == 0 {
			continue
		}
		var e Entry
		if err := json.Unmarshal(b, &e); err != nil {
			return out, fmt.Errorf("%s:%d: ledger: %w", name, line, err)
		}
		out = append(out, e)
	}
	if err := sc.Err(); err != nil {
		return out, fmt.Errorf("%s: ledger: %w", name, err)
	}
	return out, nil
}
