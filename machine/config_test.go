package machine

import (
	"errors"
	"math"
	"os"
	"strings"
	"testing"
)

func minimalTOML(t testing.TB) string {
	t.Helper()
	b, err := os.ReadFile("../testdata/plant/minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestParseMinimal(t *testing.T) {
	p, err := Parse([]byte(minimalTOML(t)), "minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	if p.ClipSeconds != DefaultClipSeconds || p.Remainder != "drop" {
		t.Errorf("defaults: clip %g remainder %q", p.ClipSeconds, p.Remainder)
	}
	if got := p.Rooms[0].Absorption; len(got) != 6 || got[5] != 0.1 {
		t.Errorf("scalar absorption not spread to six walls: %v", got)
	}
	if p.Split.Train != DefaultTrain {
		t.Errorf("default split %v", p.Split)
	}
	m := p.Machine("pump-a1")
	if m == nil || p.RecipeFor(m, m.Condition("full-load")).ID != "basic" {
		t.Fatal("lookup failed")
	}
	lo, hi := m.Condition("full-load").Band()
	if math.Abs(lo-1450.4) > 1e-9 || math.Abs(hi-1509.6) > 1e-9 {
		t.Errorf("band %g..%g", lo, hi)
	}
}

// Each case replaces one line of the minimal plant and names the key path and
// the words the error must contain.
func TestParseErrors(t *testing.T) {
	cases := []struct {
		name, old, new string
		want           []string
	}{
		{"unknown key", "seed = 7", "seed = 7\nsead = 8", []string{"sead", "unknown key", "minimal.toml:3"}},
		{"rpm zero", "rpm = 1480", "rpm = 0", []string{"machine[pump-a1].condition[full-load].rpm", "(0, 100000]"}},
		{"pitch below ball", "pitch_diameter_mm = 39.04", "pitch_diameter_mm = 5", []string{"bearing[0].pitch_diameter_mm", "must exceed ball diameter"}},
		{"contact angle", "contact_angle_deg = 0", "contact_angle_deg = 60", []string{"contact_angle_deg", "0 … 45"}},
		{"unsafe id", `id = "pump-a1"`, `id = "../etc"`, []string{"machine[0].id", "not a valid id"}},
		{"mic outside room", "max = [4, 4, 2]", "max = [4, 4, 9]", []string{"zone[near].max", "not inside room"}},
		{"machine outside room", "position = [10, 6, 1]", "position = [30, 6, 1]", []string{"machine[pump-a1].position", "not inside room"}},
		{"bad step", `kind = "gain"`, `kind = "chorus"`, []string{"recipe[basic].step[1].kind", "not one of"}},
		{"speed range", "range = [-2, 2]", "range = [-40, 2]", []string{"recipe[basic].step[0].range", "-20 … 20"}},
		{"sample rate", "sample_rate = 16000", "sample_rate = 100", []string{"sample_rate", "8000 … 192000"}},
		{"tempo needs ack", `kind = "gain"`, `kind = "tempo"`, []string{"nonphysical = true"}},
		{"syntax", "seed = 7", "seed = = 7", []string{"minimal.toml:2"}},
		{"type", "balls = 9", `balls = "nine"`, []string{"minimal.toml:", "balls"}},
	}
	base := minimalTOML(t)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(base, c.old) {
				t.Fatalf("fixture lacks %q", c.old)
			}
			src := strings.Replace(base, c.old, c.new, 1)
			_, err := Parse([]byte(src), "minimal.toml")
			if err == nil {
				t.Fatal("no error")
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q lacks %q", err, w)
				}
			}
			var ce *ConfigError
			if !errors.As(err, &ce) {
				t.Errorf("not a *ConfigError: %T", err)
			}
		})
	}
}

func TestValidID(t *testing.T) {
	for s, want := range map[string]bool{
		"pump-a1": true, "fan_2.b": true, "": false, "../x": false, "a/b": false,
		"Pump": false, ".hidden": false, "a..b": false, strings.Repeat("a", 65): false,
	} {
		if got := ValidID(s); got != want {
			t.Errorf("ValidID(%q) = %v", s, got)
		}
	}
}

func FuzzParse(f *testing.F) {
	f.Add([]byte(minimalTOML(f)))
	f.Add([]byte("seed = 1\n[[machine]]\nid = \"x\"\n"))
	f.Fuzz(func(t *testing.T, src []byte) {
		p, err := Parse(src, "fuzz.toml")
		if err == nil && p == nil {
			t.Fatal("nil plant without error")
		}
		if err != nil && p != nil {
			t.Fatal("plant with error")
		}
	})
}
