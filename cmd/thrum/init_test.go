package main

import (
	"context"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"thrum/machine"
	"thrum/machine/wavio"
)

// writeTree writes 1 s PCM16 tones at the given paths (rate per path, 16 kHz
// unless told) below root.
func writeTree(t *testing.T, root string, files map[string]int) {
	t.Helper()
	for rel, rate := range files {
		if rate == 0 {
			rate = 16000
		}
		p := filepath.Join(root, filepath.FromSlash(rel))
		os.MkdirAll(filepath.Dir(p), 0o755)
		// distinct content per file: equal files are one recording (duplicate)
		x := make([]float64, rate)
		for i := range x {
			x[i] = 0.2 * float64((i*(37+len(rel)+int(rel[0])))%100-50) / 50
		}
		if err := wavio.WriteFile(p, x, rate, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
	}
}

// scanned lists "path machine/condition label session group" for every
// recording of a loaded plant.
func scanned(t *testing.T, plant string) ([]string, *machine.Plant) {
	t.Helper()
	p, err := machine.Load(plant)
	if err != nil {
		t.Fatalf("generated plant does not load: %v", err)
	}
	inv, err := machine.Scan(context.Background(), p, machine.ScanOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var out []string
	for _, r := range inv.Recordings {
		out = append(out, strings.Join([]string{r.Rel, r.Machine + "/" + r.Condition, string(r.Label), r.Session, r.Group}, " "))
	}
	sort.Strings(out)
	return out, p
}

// init --from derives a plant that loads unchanged and whose inventory
// holds every recording with its machine, condition, label and session: in
// the folder layout, in another layout (through a written manifest), and
// from a manifest given by the user.
func TestInitFrom(t *testing.T) {
	cases := []struct {
		name     string
		files    map[string]int
		args     []string // after "init DIR --from SRC"; {src} is replaced
		manifest string   // written as SRC/list.csv when set
		rate     int
		clip     string
		want     []string
		written  bool // a manifest.csv beside the plant
	}{
		{name: "folders", files: map[string]int{
			"pump-a1/full-load/take-01.wav":                   0,
			"pump-a1/full-load/take-02.wav":                   0,
			"pump-a1/full-load/anomalous/leak-01.wav":         0,
			"pump-a1/part-load/session-mon/take-01.wav":       0,
			"pump-a1/part-load/session-mon/take-02.wav":       0,
			"fan-b2/high/take-01.wav":                         48000,
			"fan-b2/high/notes.txt":                           -1,
			"fan-b2/high/session-tue/anomalous/rattle-01.wav": 0,
		}, rate: 16000, clip: "clip_seconds = 1", want: []string{
			"fan-b2/high/session-tue/anomalous/rattle-01.wav fan-b2/high anomalous tue fan-b2/high/session-tue/anomalous",
			"fan-b2/high/take-01.wav fan-b2/high normal  fan-b2/high/take-01.wav",
			"pump-a1/full-load/anomalous/leak-01.wav pump-a1/full-load anomalous  pump-a1/full-load/anomalous/leak-01.wav",
			"pump-a1/full-load/take-01.wav pump-a1/full-load normal  pump-a1/full-load/take-01.wav",
			"pump-a1/full-load/take-02.wav pump-a1/full-load normal  pump-a1/full-load/take-02.wav",
			"pump-a1/part-load/session-mon/take-01.wav pump-a1/part-load normal mon pump-a1/part-load/session-mon",
			"pump-a1/part-load/session-mon/take-02.wav pump-a1/part-load normal mon pump-a1/part-load/session-mon",
		}},
		{name: "condition folders, machine prefixes", files: map[string]int{
			"Full Load/pump-a1_001.wav": 0,
			"Full Load/pump-a1_002.wav": 0,
			"Full Load/fan-b2_001.wav":  0,
			"idle/pump-a1_001.wav":      0,
		}, args: []string{"--layout", "{condition}/{machine}_*.wav"}, rate: 16000, written: true, want: []string{
			"Full Load/fan-b2_001.wav fan-b2/full-load normal  Full Load/fan-b2_001.wav",
			"Full Load/pump-a1_001.wav pump-a1/full-load normal  Full Load/pump-a1_001.wav",
			"Full Load/pump-a1_002.wav pump-a1/full-load normal  Full Load/pump-a1_002.wav",
			"idle/pump-a1_001.wav pump-a1/idle normal  idle/pump-a1_001.wav",
		}},
		{name: "manifest", files: map[string]int{
			"a.wav": 0, "b.wav": 0, "c.wav": 0, "d/e.wav": 0,
		}, manifest: "path,machine,condition,session,label\na.wav,pump-a1,run,s1,normal\nb.wav,pump-a1,run,s1,\nc.wav,pump-a1,run,,anomalous\nd/e.wav,fan-b2,idle,,\n",
			args: []string{"--manifest", "{src}/list.csv"}, rate: 16000, want: []string{
				"a.wav pump-a1/run normal s1 pump-a1/run/session-s1",
				"b.wav pump-a1/run normal s1 pump-a1/run/session-s1",
				"c.wav pump-a1/run anomalous  c.wav",
				"d/e.wav fan-b2/idle normal  d/e.wav",
			}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			base := t.TempDir()
			src, dir := filepath.Join(base, "src"), filepath.Join(base, "plant")
			files := map[string]int{}
			for k, v := range c.files {
				if v >= 0 {
					files[k] = v
				}
			}
			writeTree(t, src, files)
			if c.files["fan-b2/high/notes.txt"] == -1 {
				os.WriteFile(filepath.Join(src, "fan-b2", "high", "notes.txt"), []byte("not audio"), 0o644)
			}
			if c.manifest != "" {
				os.WriteFile(filepath.Join(src, "list.csv"), []byte(c.manifest), 0o644)
			}
			before := tree(t, src)
			args := []string{"init", dir, "--from", src}
			for _, a := range c.args {
				args = append(args, strings.ReplaceAll(a, "{src}", src))
			}
			stdout, stderr, code := cli(t, args...)
			if code != exitOK {
				t.Fatalf("init exit %d\n%s\n%s", code, stdout, stderr)
			}
			got, p := scanned(t, filepath.Join(dir, "plant.toml"))
			if strings.Join(got, "\n") != strings.Join(c.want, "\n") {
				t.Errorf("inventory:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(c.want, "\n"))
			}
			if p.SampleRate != c.rate {
				t.Errorf("sample_rate %d, want %d (the most common)", p.SampleRate, c.rate)
			}
			if p.ClipSeconds != 1 {
				t.Errorf("clip_seconds %g, want 1 (the shortest recording)", p.ClipSeconds)
			}
			_, err := os.Stat(filepath.Join(dir, machine.ManifestName))
			if (err == nil) != c.written {
				t.Errorf("manifest.csv written %v, want %v", err == nil, c.written)
			}
			text, _ := os.ReadFile(filepath.Join(dir, "plant.toml"))
			if !strings.Contains(string(text), "rpm = 1500.0  # TODO") {
				t.Errorf("plant lacks the rpm placeholder:\n%s", text)
			}
			diffTrees(t, before, tree(t, src), "sources")
		})
	}
}

// Bad manifests are refused naming the file and line.
func TestReadManifestErrors(t *testing.T) {
	cases := []struct{ csv, want string }{
		{"file,machine,condition\na.wav,m,c\n", `no "path" column`},
		{"path,machine,condition\n/abs.wav,m,c\n", "m.csv:2: path \"/abs.wav\" must be relative"},
		{"path,machine,condition\n../up.wav,m,c\n", "m.csv:2: path \"../up.wav\" must be relative"},
		{"path,machine,condition\na.wav,m,c\na.wav,m,c\n", "m.csv:3: path \"a.wav\" is listed again (first at line 2)"},
		{"path,machine,condition,label\na.wav,m,c,broken\n", "m.csv:2: label \"broken\" is not normal or anomalous"},
		{"path,machine,condition\na.wav,,c\n", "m.csv:2: machine and condition are required"},
	}
	for _, c := range cases {
		_, err := machine.ReadManifest(strings.NewReader(c.csv), "m.csv")
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: %v, want %q", c.csv, err, c.want)
		}
	}
}
