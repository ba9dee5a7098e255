package wavio

import (
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const fixtureDir = "../../testdata/wav"

func fixture(name string) string { return filepath.Join(fixtureDir, name) }

// oracle loads the SoX decode stored beside a fixture: raw little-endian
// float64 written by `sox X.wav -L -t f64 X.f64` (see testdata/README.md).
func oracle(t testing.TB, wav string) []float64 {
	t.Helper()
	b, err := os.ReadFile(fixture(strings.TrimSuffix(wav, ".wav") + ".f64"))
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, len(b)/8)
	for i := range x {
		x[i] = math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:]))
	}
	return x
}

// soxFloatTol is the error SoX itself makes on float input: it converts
// every sample to its 32-bit integer internal format, one step of which is
// 2^-31 (SoX 14.4.2 sox.h, SOX_FLOAT_32BIT_TO_SAMPLE; from memory). Integer
// PCM converts exactly, so those fixtures are compared with tolerance 0.
const soxFloatTol = 1.0 / (1 << 31)

var fixtureTable = []struct {
	name   string
	format Format
	frames int
	warn   []string // substrings each expected in some warning
	tol    float64
	// sox: how many of the oracle's samples to compare (0 = all, and the
	// counts must match).
	sox int
}{
	{name: "s16_mono.wav", format: Format{16000, 1, 16, 16, false, false, ""}, frames: 1600},
	{name: "s16_stereo.wav", format: Format{16000, 2, 16, 16, false, false, ""}, frames: 1600},
	{name: "u8_odd.wav", format: Format{8000, 1, 8, 8, false, false, ""}, frames: 1001},
	{name: "s24_plain.wav", format: Format{16000, 1, 24, 24, false, false, ""}, frames: 1601},
	{name: "s24_ext.wav", format: Format{16000, 2, 24, 24, false, true, ""}, frames: 800},
	{name: "s32_ext.wav", format: Format{16000, 1, 32, 32, false, true, ""}, frames: 800},
	{name: "f32.wav", format: Format{16000, 2, 32, 32, true, false, ""}, frames: 800, tol: soxFloatTol},
	{name: "f64.wav", format: Format{16000, 1, 64, 64, true, false, ""}, frames: 800, tol: soxFloatTol},
	{name: "s16_4ch.wav", format: Format{16000, 4, 16, 16, false, true, ""}, frames: 800},
	{name: "list_before_data.wav", format: Format{16000, 1, 16, 16, false, false, ""}, frames: 800},
	{name: "list_after_data.wav", format: Format{16000, 1, 24, 24, false, false, ""}, frames: 801},
	{name: "odd_chunk_before_data.wav", format: Format{16000, 2, 16, 16, false, false, ""}, frames: 400},
	{name: "fmt18_s16.wav", format: Format{16000, 1, 16, 16, false, false, ""}, frames: 500},
	{name: "data_ffffffff.wav", format: Format{16000, 1, 16, 16, false, false, ""}, frames: 700, warn: []string{"0xFFFFFFFF"}},
	{name: "truncated.wav", format: Format{16000, 2, 16, 16, false, false, ""}, frames: 500,
		warn: []string{"runs past the end of the file", "not a whole number"}},
	{name: "ext_f32.wav", format: Format{16000, 2, 32, 32, true, true, ""}, frames: 600, tol: soxFloatTol},
	// Oracle from the fixture generator: SoX refuses padded containers.
	{name: "ext_s24_20bit.wav", format: Format{16000, 2, 24, 20, false, true, ""}, frames: 500},
	{name: "clipped_s16.wav", format: Format{16000, 1, 16, 16, false, false, ""}, frames: 800},
}

func TestFixturesMatchSox(t *testing.T) {
	for _, tc := range fixtureTable {
		t.Run(tc.name, func(t *testing.T) {
			a, err := ReadFile(fixture(tc.name))
			if err != nil {
				t.Fatal(err)
			}
			if a.Format != tc.format {
				t.Errorf("format %+v, want %+v", a.Format, tc.format)
			}
			if a.Frames != tc.frames || len(a.Data) != tc.frames*tc.format.Channels {
				t.Fatalf("%d frames (%d samples), want %d", a.Frames, len(a.Data), tc.frames)
			}
			for _, w := range tc.warn {
				if !anyContains(a.Warnings, w) {
					t.Errorf("warnings %q lack %q", a.Warnings, w)
				}
			}
			if len(tc.warn) == 0 && len(a.Warnings) > 0 {
				t.Errorf("unexpected warnings %q", a.Warnings)
			}
			want := oracle(t, tc.name)
			if len(want) != len(a.Data) {
				t.Fatalf("sox decodes %d samples, we %d", len(want), len(a.Data))
			}
			worst := 0.0
			for i, v := range a.Data {
				worst = max(worst, math.Abs(v-want[i]))
			}
			if worst > tc.tol {
				t.Errorf("max |ours - sox| = %g, want ≤ %g", worst, tc.tol)
			}
		})
	}
}

func anyContains(list []string, sub string) bool {
	for _, s := range list {
		if strings.Contains(s, sub) {
			return true
		}
	}
	return false
}

// The exact scales: full-scale 16-bit codes decode to 32767/32768 and -1
// (PCM b bits → int/2^(b-1); Microsoft WAVEFORMATEX documentation, from
// memory).
func TestClippedFullScale(t *testing.T) {
	a, err := ReadFile(fixture("clipped_s16.wav"))
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range a.Data[:100] {
		want := 32767.0 / 32768
		if i >= 50 {
			want = -1
		}
		if v != want {
			t.Fatalf("sample %d = %v, want %v", i, v, want)
		}
	}
	lo, hi := 0.0, 0.0
	for _, v := range a.Data {
		lo, hi = min(lo, v), max(hi, v)
	}
	if lo != -1 || hi != 32767.0/32768 {
		t.Errorf("range [%v, %v], want [-1, 32767/32768]", lo, hi)
	}
}
