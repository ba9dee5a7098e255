package ledger

import "thrum/machine"

// Schema is the version of the line format this package writes. Every line
// it writes carries it in its "schema" field.
const Schema = 1

// FileName is the ledger file of a machine inside its output folder.
const FileName = "ledger.jsonl"

// Stage is a stage that writes ledger lines.
type Stage string

// The stages, in the order their sections appear in a ledger.
const (
	Expand   Stage = "expand"
	Faults   Stage = "faults"
	Features Stage = "features"
)

// Stages returns the stages in canonical ledger order.
func Stages() []Stage { return []Stage{Expand, Faults, Features} }

// Rank is the stage's position in Stages, or -1 for an unknown stage.
func (s Stage) Rank() int {
	for i, t := range Stages() {
		if s == t {
			return i
		}
	}
	return -1
}

// Kind says whether a line names an output, a rejected variant or an
// excluded recording.
type Kind string

// Line kinds.
const (
	KindOutput   Kind = "output"
	KindRejected Kind = "rejected"
	// KindExcluded is a source recording the expand stage did not use:
	// its samples failed a check (non-finite, absurd or silent samples) or
	// the plant's quality gate (clipped, DC offset, quiet). The line names
	// the source, its hash and Reason ("<kind>: <message>"); it has no
	// Path, clip or variant (Variant −1).
	KindExcluded Kind = "excluded"
)

// Entry is one line of OUT/<machine-id>/ledger.jsonl: everything needed to
// redo one output, or the reason a variant was not written.
type Entry struct {
	// Schema is the line format version (see Schema); 0 for a line written
	// before the field existed. Writers stamp it; callers leave it zero.
	Schema int  `json:"schema"`
	Kind   Kind `json:"kind"`
	// Stage is the stage that wrote the line.
	Stage Stage `json:"stage"`
	// Path is the output file, relative to the output root, slash-separated.
	Path   string `json:"path,omitempty"`
	SHA256 string `json:"sha256,omitempty"`
	// Source is the source recording, relative to the recordings root.
	Source       string `json:"source"`
	SourceSHA256 string `json:"source_sha256"`
	// Clip is the clip index inside the source; ClipStart and ClipFrames
	// locate it in frames at the working rate (SampleRate), also for a
	// resampled source.
	Clip       int            `json:"clip"`
	ClipStart  int64          `json:"clip_start"`
	ClipFrames int64          `json:"clip_frames"`
	Machine    string         `json:"machine"`
	Condition  string         `json:"condition"`
	Origin     machine.Origin `json:"origin"`
	Label      machine.Label  `json:"label"`
	// Group is the split unit: the source recording, or its session.
	Group      string `json:"group"`
	Variant    int    `json:"variant"`
	Seed       uint64 `json:"seed"`
	SampleRate int    `json:"sample_rate"`
	// SourceRate and Resample are the source recording's rate and the
	// exact conversion ratio out/in ("1/3") when it was resampled to
	// SampleRate; absent otherwise.
	SourceRate int    `json:"source_rate,omitempty"`
	Resample   string `json:"resample,omitempty"`
	// BandwidthHz is the band the clip was limited to when the machine's
	// recordings come at different rates or the plant sets bandwidth_hz
	// (see machine.Scan); absent otherwise.
	BandwidthHz float64 `json:"bandwidth_hz,omitempty"`
	// Channel is the source channel (from 1) when the channel mode reads
	// one channel rather than the mean.
	Channel int `json:"channel,omitempty"`
	// Speed is the total speed ratio applied (1 when none): the clip's actual
	// shaft rate is the condition's rpm/60 times Speed.
	Speed float64 `json:"speed"`
	// SpeedDrawn is the product of the speed ratios the variant's speed
	// steps drew, before the total was clamped into the condition's band
	// and out of the hold-out bands; Speed is what was applied. Set only on
	// lines with a speed step.
	SpeedDrawn float64      `json:"speed_drawn,omitempty"`
	Steps      []StepRecord `json:"steps,omitempty"`
	// Scale is the factor applied at the end to keep the mix (or a recorded
	// clip of sensor data beyond ±1, for PCM outputs) from clipping
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
	// Undefined names the fields of the line that had no finite value,
	// each with the reason (see Defined); such a field holds 0 and means
	// nothing. Only rejected lines have it.
	Undefined map[string]string `json:"undefined,omitempty"`
}

// StepRecord is one applied transform with its exact drawn parameters.
type StepRecord struct {
	Kind   string             `json:"kind"`
	Params map[string]float64 `json:"params,omitempty"`
	Text   map[string]string  `json:"text,omitempty"`
	// Nonphysical marks tempo and pitch, which break machine physics.
	Nonphysical bool `json:"nonphysical,omitempty"`
	// Undefined names the measured values that have no value (the SNR of a
	// silent mix, the T30 of a response that never decays 35 dB), each with
	// the reason; such a value is absent from Params. A line never holds a
	// NaN or an infinity.
	Undefined map[string]string `json:"undefined,omitempty"`
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
	// Bearing names the machine's bearing a bearing-defect cue was built
	// for; absent for other kinds.
	Bearing *BearingRecord `json:"bearing,omitempty"`
	Seed    uint64         `json:"seed"`
}

// BearingRecord names one of a machine's bearings: its index in the
// machine's [[machine.bearing]] list (0 first) and its name, when it has
// one.
type BearingRecord struct {
	Index int    `json:"index"`
	Name  string `json:"name,omitempty"`
}
