// Package demoplant writes an invented example plant, Weir Lane pumping
// station, with recordings synthesised from its machine physics, so that a
// new user can run every stage of thrum before recording anything.
//
// # The plant
//
// ExampleTOML is the commented plant.toml: a 5-vane centrifugal pump and a
// two-stage-gearbox conveyor in a pump hall, a 9-blade axial fan in a fan
// house, two conditions each (the fan's low speed held out), two recipes,
// fault plans and one background recording. Write writes that file with
// the chosen seed and the recordings it describes:
//
//	plant.toml
//	recordings/<machine-id>/<condition>/take-NN.wav
//	recordings/conveyor-c1/full/session-visit-02/take-NN.wav   (a session)
//	recordings/pump-p1/duty/anomalous/outer-race-01.wav        (a bearing fault)
//	recordings/fan-f1/high/anomalous/blade-rub-01.wav          (a blade rub)
//	recordings/conveyor-c1/full/anomalous/inner-race-01.wav    (a bearing fault)
//	backgrounds/hall-ambience.wav
//
// All files are 16 kHz, 16-bit PCM, mono.
//
// # Synthesis
//
// Each recording follows one shaft speed f(t) = f0·(1 + o + w(t)): f0 is the
// condition's rpm/60, o a per-recording offset and w(t) a slow wander (three
// sinusoids below 0.3 Hz), with |o + w| ≤ 0.35 × band_percent/100, so the
// speed stays well inside the condition's band. The shaft phase is the
// integral of f, updated every 64 samples (4 ms); every tonal line is an
// exact order of it, so all lines move together:
//
//   - shaft orders 1×…N× of every shaft, amplitude ∝ 1/k;
//   - blade/vane pass (machine.BladePassHz) and its harmonics, with ±1×
//     sidebands;
//   - gear mesh of every stage (Machine.MeshHz) and harmonics, with
//     sidebands at ± the rates of both shafts of the stage.
//
// Broadband parts, all from uniform white noise (near-Gaussian once
// filtered): a structural resonance (band-pass biquad), rolling-element
// bearing noise (band-pass around 4 kHz) and flow noise (low-pass). The
// machine signal is set to −22 dB re full scale at 1 m at the machine's
// fastest condition, and 30·log10 of the speed ratio lower at slower ones.
//
// The machine signal reaches the microphone at a distance d of its own for
// each take, near (0.5–1 m: take-01), far (1.5–2.3 m: take-02) or between
// (1–1.5 m), as a direct part scaled by 1/d plus twelve early reflections:
// delays up to twice the room's longest side over the speed of sound,
// amplitudes decaying 60 dB per Sabine reverberation time
// (RT60 = 0.161·V/Σ S·α) and scaled to 35 % of the reverberant energy
// 1/r_c², with critical distance r_c = 0.057·√(V/RT60) m. The
// reflections, mains hum (50 Hz and harmonics, electrical pickup) and the
// room's noise floor do not depend on d, so each take has its own level
// and direct-to-noise ratio.
//
// Every condition has six split groups, enough to fill train, eval and
// test; the held-out one, which goes to test whole, has two. The conveyor
// at full speed has a session folder (two takes, one group) in place of
// take-03.
//
// Every machine has two anomalous recordings in a condition that is not
// held out, so the split gives eval and test one each. The pump's add
// outer-race impacts of its drive-end bearing at BPFO (Bearing.Orders times the instantaneous shaft rate) less
// 1 % slip, with 1 % jitter between impacts, each ringing a 3.4 kHz
// resonance with damping ratio 0.04; the impact train's RMS is 10 dB below
// the machine signal's. The fan's and the conveyor's are one clip long and
// made by the fault-cue models of augment/fault at the take's mean shaft
// rate: the fan's a rotor unbalance (1× raised to −12 dB re the machine
// signal) whose blade tips strike the casing once per revolution (an impact
// train at −14 dB, 0.5 % jitter, ringing 2.6 kHz with damping 0.03); the
// conveyor's an inner-race defect of the motor-shaft bearing at BPFI less
// 1 % slip, load-modulated at the shaft rate, ringing 3 kHz with damping
// 0.05, at −12 dB. The background is broadband room noise, hum and a
// distant, low-passed blower that is not one of the plant's machines.
//
// Levels are in dB re full scale (a sample value of 1): a take whose peak
// would exceed −1.5 dB is scaled down to −1.5 dB. Output depends only on the
// seed: each file draws from its own PCG stream keyed by (seed, file path),
// and each machine's fixed character (line amplitudes and phases, resonance)
// from a stream keyed by (seed, machine id).
package demoplant
