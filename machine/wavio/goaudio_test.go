package wavio

import (
	"bytes"
	"errors"
	"math"
	"os"
	"testing"

	"github.com/go-audio/wav"
)

// goAudioDecode is the independent decoder github.com/go-audio/wav v1.1.0:
// raw integer samples and the source bit depth.
func goAudioDecode(t *testing.T, name string) ([]int, int, error) {
	t.Helper()
	raw, err := os.ReadFile(fixture(name))
	if err != nil {
		t.Fatal(err)
	}
	d := wav.NewDecoder(bytes.NewReader(raw))
	buf, err := d.FullPCMBuffer()
	if err != nil {
		return nil, 0, err
	}
	return buf.Data, buf.SourceBitDepth, nil
}

// For even-sized integer PCM, go-audio and this reader agree exactly once
// go-audio's integers are scaled by 2^(b-1).
func TestGoAudioCrossCheck(t *testing.T) {
	for _, name := range []string{
		"s16_mono.wav", "s16_stereo.wav", "s24_ext.wav", "s32_ext.wav", "s16_4ch.wav",
		"list_before_data.wav", "odd_chunk_before_data.wav", "fmt18_s16.wav", "clipped_s16.wav",
	} {
		ints, bits, err := goAudioDecode(t, name)
		if err != nil {
			t.Fatalf("%s: go-audio: %v", name, err)
		}
		a, err := ReadFile(fixture(name))
		if err != nil {
			t.Fatal(err)
		}
		if len(ints) != len(a.Data) || bits != a.Format.BitDepth {
			t.Fatalf("%s: go-audio %d samples of %d bits, ours %d of %d", name, len(ints), bits, len(a.Data), a.Format.BitDepth)
		}
		scale := math.Ldexp(1, bits-1)
		for i, v := range ints {
			if float64(v)/scale != a.Data[i] {
				t.Fatalf("%s sample %d: go-audio %d/2^%d, ours %v", name, i, v, bits-1, a.Data[i])
			}
		}
	}
}

// The go-audio faults that are the reason this reader exists, each shown
// on a fixture next to this reader's (SoX-confirmed) result. The go-audio
// half of each check documents v1.1.0's behaviour; if a future version
// fixes it, the check fails and says so.
func TestGoAudioFaultsHandled(t *testing.T) {
	t.Run("float32 as raw bits", func(t *testing.T) {
		ints, _, err := goAudioDecode(t, "f32.wav")
		if err != nil {
			t.Fatal(err)
		}
		a, err := ReadFile(fixture("f32.wav"))
		if err != nil {
			t.Fatal(err)
		}
		same := 0
		for i, v := range ints {
			if int32(v) == int32(math.Float32bits(float32(a.Data[i]))) {
				same++
			}
		}
		if same != len(ints) || len(ints) != len(a.Data) {
			t.Errorf("go-audio float32 bit patterns: %d of %d (fixed upstream?)", same, len(ints))
		}
		checkSox(t, "f32.wav", a.Data, soxFloatTol)
	})
	t.Run("pad byte read as a sample", func(t *testing.T) {
		ints, _, err := goAudioDecode(t, "u8_odd.wav")
		if err != nil {
			t.Fatal(err)
		}
		a, err := ReadFile(fixture("u8_odd.wav"))
		if err != nil {
			t.Fatal(err)
		}
		if len(ints) != 1002 {
			t.Errorf("go-audio gives %d samples for 1001 (fixed upstream?)", len(ints))
		}
		checkSox(t, "u8_odd.wav", a.Data, 0)
	})
	t.Run("pad byte before a trailing LIST", func(t *testing.T) {
		ints, _, err := goAudioDecode(t, "list_after_data.wav")
		if err != nil {
			t.Fatal(err)
		}
		a, err := ReadFile(fixture("list_after_data.wav"))
		if err != nil {
			t.Fatal(err)
		}
		if len(ints) != 802 {
			t.Errorf("go-audio gives %d samples for 801 (fixed upstream?)", len(ints))
		}
		checkSox(t, "list_after_data.wav", a.Data, 0)
	})
	t.Run("data size 0xFFFFFFFF read as empty", func(t *testing.T) {
		ints, _, err := goAudioDecode(t, "data_ffffffff.wav")
		if err != nil || len(ints) != 0 {
			t.Errorf("go-audio: %d samples, %v (fixed upstream?)", len(ints), err)
		}
		a, err := ReadFile(fixture("data_ffffffff.wav"))
		if err != nil {
			t.Fatal(err)
		}
		checkSox(t, "data_ffffffff.wav", a.Data, 0)
	})
	t.Run("float64 refused", func(t *testing.T) {
		if _, _, err := goAudioDecode(t, "f64.wav"); err == nil {
			t.Error("go-audio decodes float64 (fixed upstream?)")
		}
		a, err := ReadFile(fixture("f64.wav"))
		if err != nil {
			t.Fatal(err)
		}
		checkSox(t, "f64.wav", a.Data, soxFloatTol)
	})
	t.Run("A-law returned as bytes", func(t *testing.T) {
		ints, _, err := goAudioDecode(t, "alaw.wav")
		if err != nil || len(ints) == 0 {
			t.Errorf("go-audio: %d samples, %v (fixed upstream?)", len(ints), err)
		}
		var ue *UnsupportedError
		if _, err := ReadFile(fixture("alaw.wav")); !errors.As(err, &ue) {
			t.Errorf("ours: %v, want *UnsupportedError", err)
		}
	})
}

func checkSox(t *testing.T, name string, got []float64, tol float64) {
	t.Helper()
	want := oracle(t, name)
	if len(want) != len(got) {
		t.Fatalf("%s: %d samples, sox %d", name, len(got), len(want))
	}
	for i := range got {
		if math.Abs(got[i]-want[i]) > tol {
			t.Fatalf("%s sample %d: %v, sox %v", name, i, got[i], want[i])
		}
	}
}
