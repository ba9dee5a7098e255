package evaluate

import (
	"fmt"
	"math"
	"path/filepath"
	"testing"
	"thrum/machine/realdata"

	"thrum/features"
	"thrum/machine"
	"thrum/machine/wavio"
)

// Tests on measured recordings kept beside the repository (realdata/, with
// READMEs naming their sources); each skips when the folder is absent.

// readMono reads a one-channel WAV file and returns its samples and rate.
func readMono(t *testing.T, path string) ([]float64, int) {
	t.Helper()
	a, err := wavio.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if a.Format.Channels != 1 {
		t.Fatalf("%s: %d channels, want 1", filepath.Base(path), a.Format.Channels)
	}
	return a.Data, a.Format.SampleRate
}

// cut returns the log-mel clips of x[from:to) (samples), each n samples
// long, one every hop samples.
func cut(t *testing.T, lm *features.LogMel, x []float64, from, to, n, hop int) [][][]float64 {
	t.Helper()
	var clips [][][]float64
	var buf []float32
	for s := from; s+n <= to; s += hop {
		var frames int
		buf, frames = lm.Compute(buf, x[s:s+n])
		b := lm.Bands()
		c := make([][]float64, frames)
		for f := range c {
			c[f] = make([]float64, b)
			for j := range b {
				c[f][j] = float64(buf[f*b+j])
			}
		}
		clips = append(clips, c)
	}
	if len(clips) == 0 {
		t.Fatalf("no clips of %d samples in [%d, %d)", n, from, to)
	}
	return clips
}

// scoreAll fits d on train and scores the normal and anomalous clips; each
// clip is its own group.
func scoreAll(t *testing.T, d Detector, train, normal, anomalous [][][]float64) []Scored {
	t.Helper()
	if err := d.Fit(train); err != nil {
		t.Fatal(err)
	}
	var s []Scored
	for i, c := range normal {
		s = append(s, Scored{d.Score(c), false, fmt.Sprint("n", i)})
	}
	for i, c := range anomalous {
		s = append(s, Scored{d.Score(c), true, fmt.Sprint("a", i)})
	}
	return s
}

// label names a detector with its settings.
func label(d Detector) string {
	switch d := d.(type) {
	case *Gaussian:
		return fmt.Sprintf("gaussian context %d hop %d", d.Context, d.Hop)
	case *KNN:
		return fmt.Sprintf("knn k %d", d.K)
	}
	return d.Name()
}

// margin describes how far apart the classes score: the highest normal
// and the lowest anomalous score.
func margin(s []Scored) string {
	hiN, loA := math.Inf(-1), math.Inf(1)
	for _, c := range s {
		if c.Anomalous {
			loA = min(loA, c.Score)
		} else {
			hiN = max(hiN, c.Score)
		}
	}
	return fmt.Sprintf("highest normal %.3g, lowest anomalous %.3g", hiN, loA)
}

// TestRealBearingRig trains on the healthy record of the bearing rig
// (record 97, 48 kHz, resampled to the 12 kHz of the fault records with
// the plan recordings use) and scores held-out healthy clips against the
// outer-race (record 130) and inner-race (record 105) drive-end records.
// The target AUC ≥ 0.95 for both detectors is the one the evaluate design
// sets for this rig, where the faults are clear (the data's README: both
// records rated diagnosable, the outer race "clearly diagnosable").
func TestRealBearingRig(t *testing.T) {
	dir := realdata.Dir(t, "cwru-bearing")
	norm48, fs := readMono(t, filepath.Join(dir, "Normal_0_X097_DE_48000Hz.wav"))
	if fs != 48000 {
		t.Fatalf("healthy record at %d Hz, want 48000", fs)
	}
	const rate = 12000
	norm := machine.Resample(nil, norm48, fs, rate)
	// The bands stop at 5 kHz, below the passband edge of the rate
	// conversion (0.9 of the 6 kHz Nyquist frequency), so that the
	// resampled healthy record and the native 12 kHz fault records are
	// compared on the band both really hold: a detector must not tell them
	// apart by the empty top of the resampled spectrum.
	lm, err := features.NewLogMel(features.Config{NFFT: 512, Hop: 256, Bands: 32, FMax: 5000}, rate)
	if err != nil {
		t.Fatal(err)
	}
	const n, half = rate / 2, rate / 4 // 0.5 s clips, 0.25 s apart
	split := 3 * rate                  // first 3 s train, the rest held out
	train := cut(t, lm, norm, 0, split, n, half)
	heldOut := cut(t, lm, norm, split, len(norm), n, half)
	// Control: the same held-out seconds decimated by another resampler
	// (the data's derived 12 kHz file, a zero-phase FIR decimation) are the
	// same machine state; the detectors should barely tell them apart, so
	// the details of one rate conversion are not what they pick up.
	dec, fsDec := readMono(t, filepath.Join(dir, "Normal_0_X097_DE_12000Hz_decimated-from-48k.wav"))
	if fsDec != rate {
		t.Fatalf("decimated healthy record at %d Hz, want %d", fsDec, rate)
	}
	heldOutDec := cut(t, lm, dec, split, len(dec), n, half)
	for _, d := range []Detector{NewGaussian(3), NewKNN(2)} {
		s := scoreAll(t, d, train, heldOut, heldOutDec)
		auc := AUC(s)
		t.Logf("control (other resampler), %s: AUC %.3f; %s", label(d), auc, margin(s))
		if !(auc <= 0.8) {
			t.Errorf("control, %s: AUC %.3f between two conversions of the same seconds, want ≤ 0.8", label(d), auc)
		}
	}
	for _, fault := range []struct{ name, file string }{
		{"outer race", "OR007@6_0_X130_DE_12000Hz.wav"},
		{"inner race", "IR007_0_X105_DE_12000Hz.wav"},
	} {
		x, fs := readMono(t, filepath.Join(dir, fault.file))
		if fs != rate {
			t.Fatalf("%s at %d Hz, want %d", fault.file, fs, rate)
		}
		anom := cut(t, lm, x, 0, len(x), n, n)
		for _, d := range []Detector{NewGaussian(3), NewGaussianHop(3, 1), NewKNN(2)} {
			s := scoreAll(t, d, train, heldOut, anom)
			auc := AUC(s)
			ci := BootstrapCI(s, AUC, 500, 0.95, 1)
			t.Logf("%s, %s: AUC %.3f [%.3f, %.3f], pAUC(0.1) %.3f; %d train, %d held-out, %d fault clips; %s",
				fault.name, label(d), auc, ci.Lo, ci.Hi, PartialAUC(s, 0.1), len(train), len(heldOut), len(anom), margin(s))
			if !(auc >= 0.95) {
				t.Errorf("%s, %s: AUC %.3f, want ≥ 0.95", fault.name, label(d), auc)
			}
		}
	}
}

// TestRealMachineSound trains per machine on the first 6 s of the normal
// channel-0 recording and scores clips of its last 4 s against the
// abnormal recording. Each machine has one recording per class, so no
// threshold is asserted: the AUC and its interval are logged, and only
// checked to be numbers in [0, 1]. The interval treats clips as
// independent (one group each), which they are not: it is narrower than
// the spread over recordings would be.
func TestRealMachineSound(t *testing.T) {
	dir := realdata.Dir(t, "mimii-machine-sound")
	for _, m := range []struct{ machine, normal, abnormal string }{
		{"fan", "fn444_fan_normal_ch0_16000Hz.wav", "fab969_fan_abnormal_ch0_16000Hz.wav"},
		{"pump", "pn113_pump_normal_ch0_16000Hz.wav", "pab403_pump_abnormal_ch0_16000Hz.wav"},
	} {
		norm, fs := readMono(t, filepath.Join(dir, m.normal))
		ab, fs2 := readMono(t, filepath.Join(dir, m.abnormal))
		if fs != 16000 || fs2 != 16000 {
			t.Fatalf("%s: rates %d and %d Hz, want 16000", m.machine, fs, fs2)
		}
		lm, err := features.NewLogMel(features.Config{NFFT: 1024, Hop: 512, Bands: 64}, float64(fs))
		if err != nil {
			t.Fatal(err)
		}
		n, half := fs, fs/2 // 1 s clips
		split := 6 * fs
		train := cut(t, lm, norm, 0, split, n, half)
		heldOut := cut(t, lm, norm, split, len(norm), n, half)
		anom := cut(t, lm, ab, 0, len(ab), n, n)
		for _, d := range []Detector{NewGaussian(5), NewKNN(2)} {
			s := scoreAll(t, d, train, heldOut, anom)
			auc := AUC(s)
			ci := BootstrapCI(s, AUC, 500, 0.95, 1)
			p := PartialAUC(s, 0.1)
			t.Logf("%s, %s: AUC %.3f [%.3f, %.3f], pAUC(0.1) %.3f; %d train, %d held-out normal, %d abnormal clips; %s",
				m.machine, label(d), auc, ci.Lo, ci.Hi, p, len(train), len(heldOut), len(anom), margin(s))
			for _, v := range []float64{auc, ci.Lo, ci.Hi, p} {
				if !(v >= 0 && v <= 1) || math.IsNaN(v) {
					t.Errorf("%s, %s: AUC %v, interval %v, pAUC %v: want numbers in [0, 1]", m.machine, label(d), auc, ci, p)
				}
			}
		}
	}
}
