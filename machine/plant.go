package machine

import "fmt"

// Plant is the decoded plant.toml: the site, its machines, rooms, microphone
// zones, background recordings and recipes. Load fills it and validates it;
// the zero value is not usable.
type Plant struct {
	// Seed is the plant seed every derived seed starts from.
	Seed uint64 `toml:"seed"`
	// SampleRate is the working sample rate in Hz; every recording must have it.
	SampleRate int `toml:"sample_rate"`
	// Recordings is the recordings root, relative to the plant file's folder
	// unless absolute. Layout: <root>/<machine-id>/<condition>/.../*.wav.
	Recordings string `toml:"recordings"`
	// ClipSeconds is the clip length (default 10 s).
	ClipSeconds float64 `toml:"clip_seconds"`
	// Remainder says what happens to the tail of a recording shorter than a
	// clip: "drop" (default) or "pad" (zero-filled to a full clip when at
	// least half a clip long, dropped otherwise).
	Remainder string `toml:"remainder"`
	// Split holds the train/eval/test fractions used when a machine sets none.
	Split SplitFractions `toml:"split"`
	// SplitMethod is how groups are dealt to the splits: "shares" (the
	// default: per machine and condition, the counts that meet the shares as
	// closely as the number of groups allows, dealt over the groups in the
	// order of their stable hash) or "stable-hash" (each group by its own
	// hash alone, so adding recordings never moves existing groups, but
	// with few groups the shares are met only on average).
	SplitMethod string `toml:"split_method"`
	// BlockSeconds, when set, cuts every recording that is not in a session
	// folder and is longer than one block into blocks of whole clips
	// (floor(block_seconds / clip_seconds) clips each), every block its own
	// split group. It must be at least two clips.
	BlockSeconds float64 `toml:"block_seconds"`

	Machines    []Machine    `toml:"machine"`
	Rooms       []Room       `toml:"room"`
	Zones       []Zone       `toml:"zone"`
	Backgrounds []Background `toml:"background"`
	Recipes     []Recipe     `toml:"recipe"`
	// Features configures the features stage for every machine.
	Features *FeatureConfig `toml:"features"`
	// Quality sets the recording quality gate's thresholds and the
	// recordings accepted despite it.
	Quality *Quality `toml:"quality"`
	// Manifest, when set, is a CSV file (columns path, machine, condition,
	// session, label) listing the recordings instead of the folder layout;
	// its paths are relative to the recordings root. Relative to the plant
	// file's folder unless absolute.
	Manifest string `toml:"manifest"`

	// MainsHz is the mains frequency of the plant's supply, 50 or 60 Hz (0
	// = not given). An order-aware speed step (mode "orders") needs it:
	// shaft orders on a mains harmonic are left in place.
	MainsHz float64 `toml:"mains_hz"`

	// Path is the file the plant was loaded from (not a TOML key).
	Path string `toml:"-"`
}

// SplitFractions are the shares of groups that go to each split.
type SplitFractions struct {
	Train float64 `toml:"train"`
	Eval  float64 `toml:"eval"`
	Test  float64 `toml:"test"`
	// AnomalousEval is the share of real anomalous groups sent to eval (the
	// rest go to test).
	AnomalousEval float64 `toml:"anomalous_eval"`
}

// Split methods (Plant.SplitMethod).
const (
	SplitShares     = "shares"
	SplitStableHash = "stable-hash"
)

// Pin puts one split group of a machine in a fixed split: Group is the
// group as the ledger names it (the recording's path relative to the
// recordings root, the session folder, or a block: path#block-NNN).
type Pin struct {
	Group string `toml:"group"`
	Split Split  `toml:"split"`
}

// Machine is one physical machine (a machine id).
type Machine struct {
	ID   string `toml:"id"`
	Kind string `toml:"kind"` // pump, fan, compressor, gearbox, motor, conveyor
	// Blades is the fan blade or pump/compressor vane count (0 = none).
	Blades int `toml:"blades"`
	// Room and Zone name where the machine stands and where microphones go.
	Room string `toml:"room"`
	Zone string `toml:"zone"`
	// Position is the machine's acoustic centre in its room, metres.
	Position []float64 `toml:"position"`
	// Recipe is the default recipe id for all its conditions.
	Recipe string `toml:"recipe"`
	// Split overrides the plant's split fractions for this machine.
	Split *SplitFractions `toml:"split"`
	// Pins put named groups in a fixed split.
	Pins []Pin `toml:"pin"`

	Bearings   []Bearing   `toml:"bearing"`
	Gears      []GearStage `toml:"gear"`
	Conditions []Condition `toml:"condition"`
	Faults     *FaultPlan  `toml:"faults"`
	// Features overrides the plant's feature settings for this machine
	// (keys given here replace the plant's).
	Features *FeatureConfig `toml:"features"`
	// Channels says how multichannel recordings become the mono streams
	// the stages work on (a condition may override it): "mean" (default),
	// "N" (channel N alone, counted from 1) or "each" (every channel its
	// own stream). See ChannelMode.
	Channels string `toml:"channels"`
	// BandwidthHz, when set, is the band every clip of the machine is
	// low-passed to; otherwise, when its recordings come at different rates,
	// the narrowest source bandwidth (0.45 × the lowest rate). See Scan.
	BandwidthHz float64 `toml:"bandwidth_hz"`
	// SoundPowerExponent n: an order-aware speed change by r changes the
	// clip's level by 10·n·log10 r dB (sound power ∝ speedⁿ). Default 5
	// for fans and blowers (the fan laws), 0 for other kinds (see
	// SpeedLevelExponent).
	SoundPowerExponent *float64 `toml:"sound_power_exponent"`
}

// FeatureConfig sets the features stage. Zero values mean the defaults of
// package features (n_fft 1024, hop 512, 128 HTK bands, unit-peak triangles,
// 0 Hz … fs/2, no centre padding, log-mel in dB).
type FeatureConfig struct {
	NFFT   int     `toml:"n_fft"`
	Hop    int     `toml:"hop"`
	Bands  int     `toml:"bands"`
	Scale  string  `toml:"scale"` // "htk" or "slaney"
	Norm   string  `toml:"norm"`  // "peak" or "area"
	FMin   float64 `toml:"fmin"`
	FMax   float64 `toml:"fmax"`
	Center *bool   `toml:"center"`
	// EnvelopeHz is the band [lo, hi] Hz of the envelope spectrum (default:
	// the machine's fault-plan resonance range, else 2000 … 5000 Hz capped
	// below Nyquist); EnvelopeMaxHz the highest envelope frequency kept
	// (default 1000 Hz).
	EnvelopeHz    []float64 `toml:"envelope_hz"`
	EnvelopeMaxHz float64   `toml:"envelope_max_hz"`
	// Masked copies of each training clip's features (SpecAugment-style).
	MaskCopies *int     `toml:"mask_copies"`
	MaskF      *int     `toml:"mask_f"`
	MaskMF     *int     `toml:"mask_m_f"`
	MaskT      *int     `toml:"mask_t"`
	MaskP      *float64 `toml:"mask_p"`
	MaskMT     *int     `toml:"mask_m_t"`
	MaskValue  string   `toml:"mask_value"` // "mean" or "zero"
	// Stack also writes one stacked array per machine and split.
	Stack *bool `toml:"stack"`
	// Pictures writes PNG spectrograms and an envelope picture per machine.
	Pictures *bool `toml:"pictures"`
}

// Condition is an operating condition of one machine.
type Condition struct {
	Name string  `toml:"name"`
	RPM  float64 `toml:"rpm"`
	// BandPercent is the half-width of the speed band around RPM, in percent:
	// speed drift seen (or allowed) in this condition.
	BandPercent float64 `toml:"band_percent"`
	// HoldOut keeps the whole condition out of training.
	HoldOut bool `toml:"hold_out"`
	// Recipe overrides the machine's recipe for this condition.
	Recipe string `toml:"recipe"`
	// Channels overrides the machine's channel mode for this condition.
	Channels string `toml:"channels"`
}

// Bearing is a rolling-element bearing's geometry. Only the ratio of the two
// diameters matters for the defect rates; millimetres are the convention.
type Bearing struct {
	Name            string  `toml:"name"`
	Balls           int     `toml:"balls"`
	BallDiameterMM  float64 `toml:"ball_diameter_mm"`
	PitchDiameterMM float64 `toml:"pitch_diameter_mm"`
	ContactAngleDeg float64 `toml:"contact_angle_deg"`
	// Shaft is the gear-stage shaft the bearing sits on: 0 is the input shaft.
	Shaft int `toml:"shaft"`
}

// GearStage is one mesh: the driving gear on shaft i, the driven on shaft i+1.
type GearStage struct {
	DrivingTeeth int `toml:"driving_teeth"`
	DrivenTeeth  int `toml:"driven_teeth"`
}

// FaultPlan says which synthetic fault cues to make for a machine.
type FaultPlan struct {
	Kinds []string `toml:"kinds"`
	// PerClip is how many fault files to make per kind and recorded clip
	// (default 1).
	PerClip int `toml:"per_clip"`
	// SeverityDB is the cue level relative to the clip RMS, [min, max] dB.
	SeverityDB []float64 `toml:"severity_db"`
	// ResonanceHz is the structural resonance range, [min, max] Hz.
	ResonanceHz []float64 `toml:"resonance_hz"`
	// Damping is the resonance's damping ratio (default 0.05).
	Damping float64 `toml:"damping"`
	// JitterPercent is the slip jitter between impacts (default 1.5).
	JitterPercent *float64 `toml:"jitter_percent"`
}

// Room is a rectangular room.
type Room struct {
	ID string `toml:"id"`
	// Size is length, width, height in metres.
	Size []float64 `toml:"size"`
	// Absorption is the energy absorption coefficient per wall, in the
	// order x=0, x=Lx, y=0, y=Ly, floor, ceiling; one value means all six.
	Absorption Walls `toml:"absorption"`
	// OctaveAbsorption optionally gives per-wall absorption per octave band,
	// keyed by band centre ("125" ... "4000"), six values each.
	OctaveAbsorption map[string][]float64 `toml:"octave_absorption"`
	// RT60 optionally gives the room's measured reverberation time per
	// octave band in seconds, keyed by band centre ("125" ... "4000"): the
	// diffuse tail of its impulse responses then decays at these times
	// instead of Eyring's for the absorption.
	RT60 map[string]float64 `toml:"rt60"`
	// TemperatureC sets the speed of sound (default 20 °C).
	TemperatureC *float64 `toml:"temperature_c"`
	// RT60Range is the plausible reverberation time range, [min, max] s,
	// used by the credibility guard (default 0.1 ... 5 s).
	RT60Range []float64 `toml:"rt60_range"`
}

// Zone is a box inside a room where microphones may be placed.
type Zone struct {
	ID   string    `toml:"id"`
	Room string    `toml:"room"`
	Min  []float64 `toml:"min"`
	Max  []float64 `toml:"max"`
}

// Background is a plant background recording used for mixing.
type Background struct {
	ID   string `toml:"id"`
	Path string `toml:"path"` // relative to the plant file's folder unless absolute
	Room string `toml:"room"` // optional: the room it was recorded in
}

// Recipe is an ordered list of steps a variant may draw from.
type Recipe struct {
	ID       string `toml:"id"`
	Variants int    `toml:"variants"`
	MinSteps int    `toml:"min_steps"`
	MaxSteps int    `toml:"max_steps"`
	Steps    []Step `toml:"step"`
}

// Step is one transform a recipe may draw, with its parameter range.
type Step struct {
	// Kind: speed, gain, invert, shift, filter, noise, background, room, ir,
	// tempo, pitch.
	Kind string `toml:"kind"`
	// Range is [min, max] of the step's parameter (speed %, gain dB, shift
	// ms, cutoff Hz, SNR dB, tempo %, pitch cents).
	Range []float64 `toml:"range"`
	// Increment, when set, quantises draws to min + k·Increment.
	Increment float64 `toml:"increment"`
	// Mode: shift "circular"|"zero"; filter "lowpass"|"highpass"|"bandpass"|"telephone";
	// noise colour "white"|"pink"|"brown"|"any".
	Mode string `toml:"mode"`
	// Order of a Butterworth filter (0 = one RBJ biquad).
	Order int `toml:"order"`
	// Q of an RBJ biquad (default 1/√2).
	Q float64 `toml:"q"`
	// Weighting of the SNR measurement: "" or "none" (mean square), "A".
	Weighting string `toml:"weighting"`
	// Files are measured impulse responses for kind "ir".
	Files []string `toml:"files"`
	// Nonphysical must be true to use tempo or pitch, which break machine
	// physics (harmonics no longer move together with speed).
	Nonphysical bool `toml:"nonphysical"`
	// Orders is the highest shaft order an order-aware speed step
	// (mode "orders") moves (default 16), BandwidthHz the −3 dB bandwidth
	// of its order filters (default 1 Hz). Only with mode "orders".
	Orders      *int     `toml:"orders"`
	BandwidthHz *float64 `toml:"bandwidth_hz"`
}

// Speed step modes (Step.Mode of kind speed).
const (
	// SpeedResample resamples the clip: every line moves, the clip's
	// length changes (a source span one clip long after the change is
	// read). The default.
	SpeedResample = "resample"
	// SpeedOrders moves the shaft orders only and keeps the rest and the
	// clip's length.
	SpeedOrders = "orders"
)

// Walls holds one value per wall; in TOML it may be a single number (all six
// walls alike) or an array.
type Walls []float64

// UnmarshalTOML accepts a number or an array of numbers.
func (w *Walls) UnmarshalTOML(v any) error {
	num := func(x any) (float64, bool) {
		switch n := x.(type) {
		case int64:
			return float64(n), true
		case float64:
			return n, true
		}
		return 0, false
	}
	if x, ok := num(v); ok {
		*w = Walls{x}
		return nil
	}
	arr, ok := v.([]any)
	if !ok {
		return fmt.Errorf("expected a number or an array of numbers, got %T", v)
	}
	out := make(Walls, len(arr))
	for i, e := range arr {
		x, ok := num(e)
		if !ok {
			return fmt.Errorf("element %d: expected a number, got %T", i, e)
		}
		out[i] = x
	}
	*w = out
	return nil
}
