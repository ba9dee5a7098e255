package machine

// Split is the share of a dataset a file belongs to. Its spelling is the
// one written in lists.csv, index.csv and summaries.
type Split string

// Splits.
const (
	SplitTrain Split = "train"
	SplitEval  Split = "eval"
	SplitTest  Split = "test"
)

// Origin says how a file in the dataset came to be.
type Origin string

// Origins.
const (
	// OriginRecorded is a clip cut from a recording, unchanged.
	OriginRecorded Origin = "recorded"
	// OriginAugmented is a recipe variant of a recorded clip.
	OriginAugmented Origin = "augmented"
	// OriginSyntheticFault is a recorded clip with a synthetic fault cue.
	OriginSyntheticFault Origin = "synthetic-fault"
)

// Label is the condition class a detector learns: normal operation or not.
type Label string

// Labels.
const (
	LabelNormal    Label = "normal"
	LabelAnomalous Label = "anomalous"
)

// ToolVersion names this build; it is written into every ledger line.
const ToolVersion = "thrum 0.1.0"
