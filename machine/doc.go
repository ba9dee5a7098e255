// Package machine is the domain core every stage imports: the plant, its
// recordings, the physics that follows from its machines, and the words the
// stages share.
//
// It holds:
//
//   - the plant configuration (Plant, Machine, Condition, Bearing,
//     GearStage, Room, Zone, Background, Recipe, Step), read by Load and
//     Parse and validated with errors that name the file, line and key path
//     (*ConfigError);
//   - physics derived from the configuration: shaft rates through gear
//     stages, blade-pass and gear-mesh frequencies, bearing defect rates
//     (BPFO, BPFI, BSF, FTF), a condition's speed band;
//   - the inventory of recordings cut into clips (Scan, Recording, Clip) and
//     the survey of their levels and problems (Summarise);
//   - the shared vocabulary below, as typed names;
//   - atomic file writing (CreateAtomic, WriteFileAtomic) for every file
//     thrum produces.
//
// Sub-packages hold what splits off: machine/ledger (the per-machine record
// of every output), machine/wavio (WAV reading and writing), machine/dsp
// (the FFT, convolver and dot kernels the stages share), machine/pool (the
// bounded worker pool), machine/exposure (noise-exposure figures) and
// machine/demoplant (the invented demo plant).
//
// # Vocabulary
//
// These words mean the same thing in every package, in the files thrum
// writes and in its messages:
//
//	plant       the site as plant.toml describes it: machines, rooms, microphone zones, backgrounds, recipes
//	machine id  one physical machine (pump-a1); outputs, ledgers and statistics are kept per machine id
//	condition   one operating point of a machine (speed, load, flow) with the speed band around it
//	recording   a source file as the user has it; it is never written to
//	clip        a fixed-length piece of a recording; its group (the split unit) is the recording or its session
//	origin      how a file came to be (Origin): recorded, augmented or synthetic-fault
//	label       what a detector should call it (Label): normal or anomalous
//	recipe      the ordered transform steps a variant may draw from, with their parameter ranges
//	variant     one recipe draw applied to one clip, with its own derived seed
//	split       the share a file belongs to (Split): train, eval or test
//	hold-out    a condition kept out of training entirely, to test generalisation
//	ledger      OUT/<machine-id>/ledger.jsonl: one line per output, enough to redo it (package machine/ledger)
//	stage       a step of the pipeline that writes ledger lines (ledger.Stage): expand, faults, features
package machine
