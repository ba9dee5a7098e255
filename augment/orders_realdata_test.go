package augment

import (
	"math"
	"path/filepath"
	"testing"
	"thrum/machine/realdata"

	"thrum/machine/wavio"
)

// TestOrderSpeedBearingRig runs the order-aware speed change on a 3 s
// excerpt of the bearing rig's normal record (CWRU record 97, drive end,
// 48 kHz; its README gives about 1797 rpm, a shaft rate near 29.93 Hz, and
// mains harmonics at 240.01 and 359.99 Hz on a 60 Hz supply): the 1× line
// moves by r, the mains lines stay.
func TestOrderSpeedBearingRig(t *testing.T) {
	dir := realdata.Dir(t, "cwru-bearing")
	a, err := wavio.ReadFile(filepath.Join(dir, "Normal_0_X097_DE_48000Hz.wav"))
	if err != nil {
		t.Fatal(err)
	}
	fs := float64(a.Format.SampleRate)
	x := a.Mono(nil)
	if len(x) < int(3*fs) {
		t.Fatalf("record has %d samples, want at least 3 s", len(x))
	}
	x = x[:int(3*fs)]
	var mean float64
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	for i := range x {
		x[i] -= mean
	}
	shaft := lineHz(x, fs, 29.93, 0.3)
	if math.Abs(shaft-29.93) > 0.1 {
		t.Fatalf("1× line of the record at %.3f Hz, README: about 29.93 Hz", shaft)
	}
	const r = 1.02
	y, rep := OrderSpeed{Ratio: r, ShaftHz: 1797.0 / 60, BandPercent: 1, MainsHz: 60}.ApplyReport(nil, x, fs)
	if len(y) != len(x) {
		t.Fatalf("%d samples out of %d", len(y), len(x))
	}
	if math.Abs(rep.ShaftHz-shaft) > 0.05 {
		t.Errorf("tracked shaft rate %.3f Hz, the 1× line is at %.3f Hz", rep.ShaftHz, shaft)
	}
	if got := lineHz(y, fs, r*shaft, 0.3); math.Abs(got-r*shaft) > 0.02 {
		t.Errorf("1× line after the change at %.3f Hz, want r × %.3f = %.3f", got, shaft, r*shaft)
	}
	for _, f := range []float64{240.01, 359.99} {
		before, after := lineHz(x, fs, f, 0.3), lineHz(y, fs, f, 0.3)
		if math.Abs(after-before) > 0.01 {
			t.Errorf("mains line at %.3f Hz moved to %.3f Hz", before, after)
		}
		if a, b := toneAmp(x, fs, before), toneAmp(y, fs, before); math.Abs(20*math.Log10(b/a)) > 0.5 {
			t.Errorf("mains line at %.3f Hz: %.3g before, %.3g after", before, a, b)
		}
	}
	t.Logf("shaft %.3f Hz tracked %.3f Hz; moved %v, kept (mains) %v", shaft, rep.ShaftHz, rep.Moved, rep.KeptMains)
}
