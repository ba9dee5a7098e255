package augment

import (
	"math"
	"os"
	"path/filepath"
	"testing"

	"thrum/machine"
	"thrum/machine/wavio"
)

// planSpeedSpan: the span yields exactly one clip (⌈n·r⌉ source frames),
// lies inside the recording (moved back near its end), reads the filter's
// half-length beyond it where there is room, and a lead that is a whole
// number of outputs; a recording shorter than the span has no room.
func TestPlanSpeedSpan(t *testing.T) {
	const n = 16000
	for _, tc := range []struct {
		name             string
		ratio            float64
		clipStart, total int64
		ok               bool
		moved            bool // start moved back from the clip's
		fullMargins      bool
	}{
		{"faster, middle clip", 1.015, 16000, 64000, true, false, true},
		{"slower, middle clip", 0.985, 16000, 64000, true, false, true},
		{"faster, first clip", 1.2, 0, 64000, true, false, false},
		{"faster, last clip moves back", 1.015, 48000, 64000, true, true, true},
		{"much faster, last clip moves back", 1.2, 48000, 64000, true, true, true},
		{"slower, last clip stays", 0.8, 48000, 64000, true, false, false},
		{"recording exactly one span", 1.1, 0, 17600, true, false, false},
		{"no room: recording shorter than the span", 1.1, 0, 17599, false, false, false},
		{"interpolated ratio", math.Pi / 3, 16000, 64000, true, false, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rs := NewResampler(tc.ratio)
			sp, ok := planSpeedSpan(tc.clipStart, n, tc.total, rs)
			if ok != tc.ok {
				t.Fatalf("ok %v, want %v (%+v)", ok, tc.ok, sp)
			}
			if !ok {
				return
			}
			if want := int64(math.Ceil(n*tc.ratio - 1e-9)); sp.Frames != want {
				t.Errorf("span of %d frames, want ⌈n·r⌉ = %d", sp.Frames, want)
			}
			if sp.Start < 0 || sp.Start+sp.Frames > tc.total || sp.ReadStart < 0 || sp.ReadStart+sp.ReadFrames > tc.total {
				t.Errorf("span %+v outside the recording of %d frames", sp, tc.total)
			}
			if (sp.Start != tc.clipStart) != tc.moved {
				t.Errorf("start %d, clip start %d, moved back expected %v", sp.Start, tc.clipStart, tc.moved)
			}
			lead, trail := sp.Start-sp.ReadStart, sp.ReadStart+sp.ReadFrames-sp.Start-sp.Frames
			if margin := int64(rs.Half()); tc.fullMargins && (lead < margin || trail < margin) {
				t.Errorf("margins %d and %d, filter half-length %d", lead, trail, margin)
			}
			if d := float64(sp.Skip)*tc.ratio - float64(lead); math.Abs(d) > 1e-6 {
				t.Errorf("skip %d outputs × %v = %v source frames, lead %d", sp.Skip, tc.ratio, float64(sp.Skip)*tc.ratio, lead)
			}
			if got := rs.Len(int(sp.ReadFrames)); got < sp.Skip+n {
				t.Errorf("resampled read has %d samples, need %d", got, sp.Skip+n)
			}
		})
	}
}

// speedSource gives exactly one clip of samples, equal to the resampled
// whole recording at the same instants: reading a span with its margins is
// the speed change of the recording, cut to one clip.
func TestSpeedSourceMatchesWholeRecording(t *testing.T) {
	const fs, n, total = 16000, 8000, 40000
	x := make([]float64, total)
	for i := range x {
		x[i] = 0.3*math.Sin(2*math.Pi*440*float64(i)/fs) + 0.1*math.Sin(2*math.Pi*3150*float64(i)/fs)
	}
	dir := t.TempDir()
	file := filepath.Join(dir, "take.wav")
	w, err := os.Create(file)
	if err != nil {
		t.Fatal(err)
	}
	if err := wavio.Encode(w, x, fs, 1, wavio.Float32); err != nil {
		t.Fatal(err)
	}
	w.Close()
	whole, err := wavio.ReadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	rec := &machine.Recording{Rel: "m/c/take.wav", Path: file, Frames: total, Format: whole.Format}
	e := &env{plans: &Plans{}}
	for _, tc := range []struct {
		name  string
		ratio float64
		start int64
	}{
		{"faster, middle", 1.015, 8120}, // 8120 = 40·203, a whole number of outputs
		{"slower, middle", 0.985, 7880}, // 40·197
		{"faster, start", 1.2, 0},
		{"faster, last clip moved back", 1.015, 32000},
		{"slower, last clip", 0.9, 32400},
	} {
		t.Run(tc.name, func(t *testing.T) {
			y, sp, ok, err := e.speedSource(&workspace{}, rec, machine.Clip{Start: tc.start, Frames: n}, int64(n), tc.ratio)
			if err != nil || !ok {
				t.Fatalf("ok %v, err %v", ok, err)
			}
			if len(y) != n {
				t.Fatalf("%d samples, want %d", len(y), n)
			}
			rs := NewResampler(tc.ratio)
			// On the whole recording's output grid (Start·q/p whole):
			// output k of y is whole output Start/r + k, every k. Off it
			// (a span moved back near the end): y matches the recording
			// resampled from Start, past the filter's reach into the zeros
			// that one sees before Start.
			ref, from, first := rs.Apply(nil, whole.Data), 0, 0
			rp, rq, _ := rs.Fraction()
			if on := sp.Start * int64(rq); on%int64(rp) == 0 {
				from = int(on / int64(rp))
			} else {
				ref, first = rs.Apply(nil, whole.Data[sp.Start:]), rs.Taps()
			}
			worst := 0.0
			for k := first; k < len(y); k++ {
				worst = math.Max(worst, math.Abs(y[k]-ref[from+k]))
			}
			if worst > 1e-6 {
				t.Errorf("differs from the resampled recording by up to %g", worst)
			}
		})
	}
}
