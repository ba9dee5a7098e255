//go:build unix

package main

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path"
	"path/filepath"
	"sort"
	"strings"
	"syscall"
	"testing"
	"time"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// The hostile-input table: bad recordings (content and structure), hostile
// file system objects, bad plant files and bad output roots, each run
// against a small plant. Every case checks the exit code, that the message
// names the file and the key, field or byte offset, that the rest of the
// plant was processed (per-file cases), that the recordings are byte for
// byte unchanged, that every ledger line names a complete file, and that no
// temporary file, lock or stale file is left where it should not be.

// hostilePlant is two machines of one or two conditions, three or four 2 s
// takes each at 8 kHz, three backgrounds and a one-variant recipe.
// Line numbers matter to the config cases: keep the layout.
const hostilePlant = `seed = 31
sample_rate = 8000
recordings = "recordings"
clip_seconds = 1.0

[[room]]
id = "hall"
size = [8.0, 6.0, 4.0]
absorption = 0.3
rt60_range = [0.05, 5.0]

[[zone]]
id = "near"
room = "hall"
min = [1.0, 1.0, 1.0]
max = [3.0, 3.0, 1.8]

[[background]]
id = "bg-1"
path = "backgrounds/bg-1.wav"

[[background]]
id = "bg-2"
path = "backgrounds/bg-2.wav"

[[background]]
id = "bg-3"
path = "backgrounds/bg-3.wav"

[[recipe]]
id = "mix"
variants = 1
min_steps = 2
max_steps = 2
  [[recipe.step]]
  kind = "gain"
  range = [-3.0, 3.0]
  [[recipe.step]]
  kind = "background"
  range = [10.0, 20.0]

[[machine]]
id = "pump-a1"
kind = "pump"
blades = 6
room = "hall"
zone = "near"
position = [5.0, 4.0, 1.0]
recipe = "mix"
  [[machine.condition]]
  name = "duty"
  rpm = 1480.0
  band_percent = 2.0

[[machine]]
id = "fan-b1"
kind = "fan"
blades = 5
room = "hall"
zone = "near"
position = [6.0, 4.0, 1.0]
recipe = "mix"
  [[machine.condition]]
  name = "duty"
  rpm = 980.0
  band_percent = 2.0
  [[machine.condition]]
  name = "idle"
  rpm = 600.0
  band_percent = 2.0
`

// The file most per-file cases replace, and the takes of the plant.
const (
	hostileBad  = "pump-a1/duty/take-03.wav"
	hostileRate = 8000
)

var hostileTakes = []string{
	"pump-a1/duty/take-01.wav", "pump-a1/duty/take-02.wav", "pump-a1/duty/take-03.wav", "pump-a1/duty/take-04.wav",
	"fan-b1/duty/take-01.wav", "fan-b1/duty/take-02.wav", "fan-b1/duty/take-03.wav",
	"fan-b1/idle/take-01.wav", "fan-b1/idle/take-02.wav", "fan-b1/idle/take-03.wav",
}

// lineOf is the line of plant.toml's template holding s (the first), for
// messages that give file:line.
func lineOf(s string) string {
	i := strings.Index(hostilePlant, s)
	if i < 0 {
		panic("template lacks " + s)
	}
	return fmt.Sprint(strings.Count(hostilePlant[:i], "\n") + 1)
}

// hplant is one case's copy of the plant.
type hplant struct {
	dir, plant, rec, out string
	// vars are further placeholders a setup defines for args and want.
	vars map[string]string
	// stale, when a setup sets it, replaces the case's stale list.
	stale []string
	// release, when a setup sets it, runs right after the command.
	release func()
}

func (h *hplant) path(rel string) string { return filepath.Join(h.dir, filepath.FromSlash(rel)) }
func (h *hplant) take(rel string) string { return filepath.Join(h.rec, filepath.FromSlash(rel)) }

// edit replaces old by new in plant.toml, once; old must be there.
func (h *hplant) edit(t *testing.T, old, new string) {
	t.Helper()
	b, err := os.ReadFile(h.plant)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(b, []byte(old)) {
		t.Fatalf("plant.toml lacks %q", old)
	}
	if err := os.WriteFile(h.plant, bytes.Replace(b, []byte(old), []byte(new), 1), 0o644); err != nil {
		t.Fatal(err)
	}
}

// put writes b as the file rel (relative to the plant folder).
func (h *hplant) put(t *testing.T, rel string, b []byte) {
	t.Helper()
	p := h.path(rel)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// hostileTone is a take: a tone in noise, n frames of ch channels.
func hostileTone(seed uint64, n, ch int) []float64 {
	rng := rand.New(rand.NewPCG(seed, 3))
	x := make([]float64, n*ch)
	for i := range x {
		x[i] = 0.1 * (0.3*rng.NormFloat64() + math.Sin(2*math.Pi*(90+float64(seed))*float64(i/ch)/hostileRate))
	}
	return x
}

// encodeWAV returns the bytes of a WAV file of x.
func encodeWAV(t *testing.T, x []float64, rate, ch int, enc wavio.Encoding) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := wavio.Encode(&b, x, rate, ch, enc); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// writeHostilePlant writes the base plant into dir.
func writeHostilePlant(t *testing.T, dir string) {
	t.Helper()
	h := &hplant{dir: dir}
	h.put(t, "plant.toml", []byte(hostilePlant))
	for i, rel := range hostileTakes {
		h.put(t, "recordings/"+rel, encodeWAV(t, hostileTone(uint64(i+1), 2*hostileRate, 1), hostileRate, 1, wavio.PCM16))
	}
	for k := 1; k <= 3; k++ {
		h.put(t, fmt.Sprintf("backgrounds/bg-%d.wav", k), encodeWAV(t, hostileTone(uint64(100+k), 3*hostileRate, 1), hostileRate, 1, wavio.PCM16))
	}
}

// copyTree copies the regular files, folders and symbolic links under src
// into dst.
func copyTree(t *testing.T, src, dst string) {
	t.Helper()
	err := filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(src, p)
		to := filepath.Join(dst, rel)
		switch {
		case d.IsDir():
			return os.MkdirAll(to, 0o755)
		case d.Type()&fs.ModeSymlink != 0:
			l, err := os.Readlink(p)
			if err != nil {
				return err
			}
			return os.Symlink(l, to)
		case d.Type().IsRegular():
			b, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			return os.WriteFile(to, b, 0o644)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// manifest returns rel → sha256 of every regular file under root, "->
// target" for a symbolic link and the type of any other object, without
// following links: what a run must leave exactly as it was.
func manifest(t *testing.T, root string) map[string]string {
	t.Helper()
	m := map[string]string{}
	if _, err := os.Lstat(root); err != nil {
		return m
	}
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			if errors.Is(err, fs.ErrPermission) {
				return nil
			}
			return err
		}
		rel, _ := filepath.Rel(root, p)
		rel = filepath.ToSlash(rel)
		switch {
		case d.IsDir():
			return nil
		case d.Type()&fs.ModeSymlink != 0:
			l, _ := os.Readlink(p)
			m[rel] = "-> " + l
		case d.Type().IsRegular():
			if st, err := d.Info(); err == nil && st.Size() > 64<<20 {
				// the sparse take of the interrupt cases: size and time
				m[rel] = fmt.Sprint("size ", st.Size(), " modified ", st.ModTime())
				return nil
			}
			b, err := os.ReadFile(p)
			if err != nil {
				m[rel] = "unreadable"
				return nil
			}
			s := sha256.Sum256(b)
			m[rel] = hex.EncodeToString(s[:])
		default:
			m[rel] = d.Type().String()
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// hostileCase is one hostile input.
type hostileCase struct {
	name string
	// setup turns the case's copy of the plant hostile.
	setup func(t *testing.T, h *hplant)
	// args of the command; nil runs "run PLANT --out OUT -q". {plant},
	// {out}, {rec} and {dir} are replaced.
	args []string
	exit int
	// want: substrings of stdout+stderr ({plant}, {out}, {rec}, {dir}
	// replaced), naming the file and the key, field or byte offset.
	want []string
	// unused: recordings the run must leave out; every other take of the
	// plant must have its recorded clips in the ledgers (per-file cases
	// only: set perFile).
	perFile bool
	unused  []string
	// process runs the command as its own process (with a time limit);
	// user runs it as an unprivileged user (root ignores file modes).
	process, user bool
	// stale lists the files expected under OUT/.stale (nil: none).
	stale []string
	// check runs further checks after the command.
	check func(t *testing.T, h *hplant, stdout, stderr string)
	// parallel runs the case beside the other parallel cases (slow ones).
	parallel bool
	// interrupt sends SIGINT this long after the process started.
	interrupt time.Duration
}

// runHostile builds the category's plant once and runs every case on its
// own copy.
func runHostile(t *testing.T, base func(t *testing.T, dir string), cases []hostileCase) {
	t.Helper()
	if testing.Short() {
		t.Skip("end to end")
	}
	golden := t.TempDir()
	base(t, golden)
	names := map[string]bool{}
	for _, c := range cases {
		if names[c.name] {
			t.Fatalf("two cases named %q", c.name)
		}
		names[c.name] = true
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			copyTree(t, golden, dir)
			h := &hplant{dir: dir, plant: filepath.Join(dir, "plant.toml"), rec: filepath.Join(dir, "recordings"), out: filepath.Join(dir, "out")}
			if c.setup != nil {
				c.setup(t, h)
			}
			if c.parallel {
				t.Parallel()
			}
			fill := func(s string) string {
				r := []string{"{plant}", h.plant, "{out}", h.out, "{rec}", h.rec, "{dir}", h.dir}
				for k, v := range h.vars {
					r = append(r, "{"+k+"}", v)
				}
				return strings.NewReplacer(r...).Replace(s)
			}
			raw := c.args
			if raw == nil {
				raw = []string{"run", "{plant}", "--out", "{out}", "-q"}
			}
			var args []string
			for _, a := range raw {
				args = append(args, fill(a))
			}
			before := manifest(t, h.rec)
			var stdout, stderr string
			var code int
			if c.process || c.user || c.interrupt > 0 {
				stdout, stderr, code = hostileProcess(t, h, c.user, c.interrupt, args)
			} else {
				stdout, stderr, code = cli(t, args...)
			}
			if h.release != nil {
				h.release()
			}
			if h.stale != nil {
				c.stale = h.stale
			}
			msgs := stdout + stderr
			if code != c.exit {
				t.Errorf("exit %d, want %d\nstdout:\n%s\nstderr:\n%s", code, c.exit, stdout, stderr)
			}
			for _, w := range c.want {
				if w = fill(w); !strings.Contains(msgs, w) {
					t.Errorf("messages lack %q:\n%s", w, msgs)
				}
			}
			if _, err := os.Lstat(h.rec); err == nil {
				diffTrees(t, before, manifest(t, h.rec), "recordings")
			}
			checkOutClean(t, h.out, c.stale)
			if c.perFile {
				checkProcessed(t, h.out, c.unused)
			}
			if c.check != nil {
				c.check(t, h, stdout, stderr)
			}
		})
	}
}

// hostileProcess runs the test binary as the thrum command, as an
// unprivileged user when user is set, and kills it after a minute.
func hostileProcess(t *testing.T, h *hplant, user bool, interrupt time.Duration, args []string) (string, string, int) {
	t.Helper()
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(exe, append([]string{"--no-caution"}, args...)...)
	cmd.Env = append(os.Environ(), "THRUM_AS_CLI=1")
	if user {
		exe = unprivileged(t, h)
		cmd.Path, cmd.Args[0] = exe, exe
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: 65534, Gid: 65534}}
		cmd.Dir = h.dir
	}
	var stdout, stderr bytes.Buffer
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Start(); err != nil {
		if user {
			t.Skipf("cannot start a process as uid 65534: %v", err)
		}
		t.Fatal(err)
	}
	done := make(chan struct{})
	go func() { cmd.Wait(); close(done) }()
	if interrupt > 0 {
		select {
		case <-done:
			t.Errorf("%v ended before the signal: the case is too small", args)
		case <-time.After(interrupt):
			cmd.Process.Signal(syscall.SIGINT)
		}
	}
	select {
	case <-done:
	case <-time.After(time.Minute):
		cmd.Process.Kill()
		<-done
		t.Fatalf("%v did not end within a minute (blocked?)\n%s", args, stderr.String())
	}
	return stdout.String(), stderr.String(), cmd.ProcessState.ExitCode()
}

// unprivileged prepares a case to run as uid 65534 (nobody): it must be
// root to switch user, the case folder and every folder above it must be
// reachable, and the binary is copied where that user may run it. It
// returns the copy, or skips the case with the reason.
func unprivileged(t *testing.T, h *hplant) string {
	t.Helper()
	if os.Geteuid() != 0 {
		// modes are enforced for this user already, but it cannot switch
		t.Skip("not root: cannot switch to an unprivileged user (and the case needs one)")
	}
	exe, _ := os.Executable()
	b, err := os.ReadFile(exe)
	if err != nil {
		t.Fatal(err)
	}
	cp := filepath.Join(h.dir, "thrum.bin")
	if err := os.WriteFile(cp, b, 0o755); err != nil {
		t.Fatal(err)
	}
	// everything in the case folder belongs to nobody, except what the case
	// made unreadable on purpose (mode 0): the case's own setup decides
	for d := h.dir; d != "/" && d != "."; d = filepath.Dir(d) {
		if st, err := os.Stat(d); err == nil && st.Mode().Perm()&0o001 == 0 {
			if err := os.Chmod(d, st.Mode().Perm()|0o011); err != nil {
				t.Skipf("cannot open %s to an unprivileged user: %v", d, err)
			}
		}
	}
	filepath.WalkDir(h.dir, func(p string, d fs.DirEntry, err error) error {
		if err == nil {
			os.Lchown(p, 65534, 65534)
		}
		return nil
	})
	return cp
}

// checkOutClean checks OUT after a case: every ledger (and journal) line's
// file is there with its hash, no temporary file, no lock and nothing
// under OUT/.stale but what the case expects.
func checkOutClean(t *testing.T, out string, stale []string) {
	t.Helper()
	if _, err := os.Stat(out); err != nil {
		return
	}
	checkRecorded(t, out)
	want := map[string]bool{}
	for _, s := range stale {
		want[path.Join(machine.StaleDir, s)] = true
	}
	var got []string
	filepath.WalkDir(out, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return nil
		}
		rel, _ := filepath.Rel(out, p)
		rel = filepath.ToSlash(rel)
		switch {
		case machine.IsTemp(d.Name()):
			t.Errorf("temporary file %s left in OUT", rel)
		case strings.HasPrefix(d.Name(), ledger.LockName):
			t.Errorf("lock file %s left in OUT", rel)
		case strings.HasPrefix(rel, machine.StaleDir+"/"):
			got = append(got, rel)
			if !want[rel] {
				t.Errorf("unexpected stale file %s", rel)
			}
		}
		return nil
	})
	if len(got) != len(want) {
		t.Errorf("stale files %v, want %d (%v)", got, len(want), stale)
	}
}

// checkProcessed checks that every take of the plant but unused has its
// recorded clips (two each) in the ledgers under out, and unused none.
func checkProcessed(t *testing.T, out string, unused []string) {
	t.Helper()
	es, err := ledger.ReadTree(out)
	if err != nil {
		t.Errorf("ledgers: %v", err)
		return
	}
	clips := map[string]int{}
	for _, e := range es {
		if e.Stage == ledger.Expand && e.Kind == ledger.KindOutput && e.Variant == -1 {
			clips[e.Source]++
		}
	}
	skip := map[string]bool{}
	for _, u := range unused {
		skip[u] = true
	}
	for _, rel := range hostileTakes {
		want := 2
		if skip[rel] {
			want = 0
		}
		if clips[rel] != want {
			t.Errorf("%s: %d recorded clips, want %d", rel, clips[rel], want)
		}
	}
	for _, u := range unused {
		if clips[u] != 0 {
			t.Errorf("%s was used (%d clips)", u, clips[u])
		}
	}
}

// WAV building blocks for the structure cases. A canonical PCM16 mono file
// of the plant's rate has its RIFF header at 0, the fmt chunk's id at 12,
// its size at 16, its body at 20 (format code 20, channels 22, rate 24,
// byte rate 28, block align 32, bits 34), the data chunk's id at 36, its
// size at 40 and the samples from 44 (the canonical layout, from memory).
func le16(v uint16) []byte { return binary.LittleEndian.AppendUint16(nil, v) }
func le32(v uint32) []byte { return binary.LittleEndian.AppendUint32(nil, v) }

func wavChunk(id string, size uint32, body []byte) []byte {
	b := append([]byte(id), le32(size)...)
	return append(b, body...)
}

// fmtBody is a 16-byte fmt body.
func fmtBody(tag, ch uint16, rate uint32, align, bits uint16) []byte {
	b := append(le16(tag), le16(ch)...)
	b = append(b, le32(rate)...)
	b = append(b, le32(rate*uint32(align))...)
	b = append(b, le16(align)...)
	return append(b, le16(bits)...)
}

// riff wraps chunks in a RIFF WAVE header with the right size.
func riff(chunks ...[]byte) []byte {
	body := []byte("WAVE")
	for _, c := range chunks {
		body = append(body, c...)
	}
	return append(append([]byte("RIFF"), le32(uint32(len(body)))...), body...)
}

// pcmSamples is the data of a 2 s PCM16 mono take.
func pcmSamples(t *testing.T) []byte {
	return encodeWAV(t, hostileTone(77, 2*hostileRate, 1), hostileRate, 1, wavio.PCM16)[44:]
}

// goodFmt and goodData are the canonical chunks of a 2 s take.
func goodFmt() []byte { return wavChunk("fmt ", 16, fmtBody(1, 1, hostileRate, 2, 16)) }
func goodData(t *testing.T) []byte {
	d := pcmSamples(t)
	return wavChunk("data", uint32(len(d)), d)
}

// replaceBad returns a setup that writes b over the plant's bad take.
func replaceBad(b func(t *testing.T) []byte) func(t *testing.T, h *hplant) {
	return func(t *testing.T, h *hplant) {
		if err := os.WriteFile(h.take(hostileBad), b(t), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// structCase is a bad take that is reported at a byte offset and field,
// and not used; the run goes on and exits 0.
func structCase(name string, want string, b func(t *testing.T) []byte) hostileCase {
	return hostileCase{name: name, setup: replaceBad(b), perFile: true, unused: []string{hostileBad},
		args: []string{"expand", "{plant}", "--out", "{out}", "-q"},
		want: []string{hostileBad + ": unreadable: ", want}}
}

// usedCase is an odd but readable take: it is used, with a warning when
// warn is set.
func usedCase(name string, warn string, b func(t *testing.T) []byte) hostileCase {
	c := hostileCase{name: name, setup: replaceBad(b), perFile: true,
		args: []string{"survey", "{plant}"}}
	if warn != "" {
		c.want = []string{hostileBad, warn}
	}
	c.args = []string{"expand", "{plant}", "--out", "{out}", "-q"}
	c.check = func(t *testing.T, h *hplant, _, _ string) {
		stdout, _, _ := cli(t, "survey", h.plant)
		if warn != "" && !strings.Contains(stdout, warn) {
			t.Errorf("survey does not warn %q:\n%s", warn, stdout)
		}
	}
	return c
}

func TestHostileWAVStructure(t *testing.T) {
	bytesOf := func(b []byte) func(*testing.T) []byte { return func(*testing.T) []byte { return b } }
	withFmt := func(body []byte) func(*testing.T) []byte {
		return func(t *testing.T) []byte { return riff(wavChunk("fmt ", uint32(len(body)), body), goodData(t)) }
	}
	ext := func(sub uint16, guidTail []byte) []byte { // a 40-byte extensible fmt body
		b := fmtBody(0xFFFE, 1, hostileRate, 2, 16)
		b = append(b, le16(22)...) // cbSize
		b = append(b, le16(16)...) // valid bits
		b = append(b, le32(4)...)  // channel mask
		b = append(b, le16(sub)...)
		return append(b, guidTail...)
	}
	pcmGUIDTail := []byte{0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71} // KSDATAFORMAT_SUBTYPE_PCM tail (from memory)
	rng := rand.New(rand.NewPCG(9, 9))
	garbage := make([]byte, 4096)
	for i := range garbage {
		garbage[i] = byte(rng.Uint32())
	}
	cases := []hostileCase{
		structCase("empty file", "offset 0: riff.id: unexpected end of file", bytesOf(nil)),
		structCase("truncated RIFF header", "offset 4: riff.form: unexpected end of file", bytesOf([]byte("RIFF\x10\x00"))),
		structCase("garbage bytes", "offset 0: riff.id: not a RIFF file", bytesOf(garbage)),
		structCase("text file named .wav", "offset 0: riff.id: not a RIFF file", bytesOf([]byte("pump notes, 3 May\n"))),
		structCase("RIFX big-endian", "offset 0: riff.id: big-endian RIFX container", func(t *testing.T) []byte {
			b := riff(goodFmt(), goodData(t))
			copy(b, "RIFX")
			return b
		}),
		structCase("RF64 container", "offset 0: riff.id: RF64 container", func(t *testing.T) []byte {
			b := riff(goodFmt(), goodData(t))
			copy(b, "RF64")
			return b
		}),
		structCase("form is not WAVE", `offset 8: riff.form: RIFF form "AVI " is not WAVE`, func(t *testing.T) []byte {
			b := riff(goodFmt(), goodData(t))
			copy(b[8:], "AVI ")
			return b
		}),
		structCase("header only", "offset 12: fmt: no fmt chunk before end of file", bytesOf(riff())),
		structCase("data chunk before fmt", "offset 12: data: data chunk before fmt chunk", func(t *testing.T) []byte { return riff(goodData(t), goodFmt()) }),
		structCase("no data chunk", "offset 36: data: no data chunk before end of file", bytesOf(riff(goodFmt()))),
		structCase("fmt chunk too small", "offset 16: fmt.size: fmt chunk of 8 bytes, want at least 16", func(t *testing.T) []byte {
			return riff(wavChunk("fmt ", 8, fmtBody(1, 1, hostileRate, 2, 16)[:8]), goodData(t))
		}),
		structCase("fmt chunk size huge", "offset 16: fmt.size: fmt chunk of 4294967295 bytes is implausibly large", func(t *testing.T) []byte {
			return riff(wavChunk("fmt ", 0xFFFFFFFF, fmtBody(1, 1, hostileRate, 2, 16)), goodData(t))
		}),
		structCase("fmt chunk cut short", "offset 20: fmt: unexpected end of file after 10 of 16 bytes", bytesOf(riff(wavChunk("fmt ", 16, fmtBody(1, 1, hostileRate, 2, 16)[:10])))),
		structCase("odd chunk size runs past the end", `offset 40: chunk: chunk "LIST" of 1000000001 bytes runs past the end of the file`, func(t *testing.T) []byte {
			return riff(goodFmt(), wavChunk("LIST", 1000000001, []byte("INFOjunk")), goodData(t))
		}),
		structCase("format code 0", "offset 20: fmt.audio_format: unsupported format tag 0 (unknown)", withFmt(fmtBody(0, 1, hostileRate, 2, 16))),
		structCase("format code MS ADPCM", "offset 20: fmt.audio_format: unsupported format tag 2 (MS ADPCM)", withFmt(fmtBody(2, 1, hostileRate, 2, 16))),
		structCase("format code A-law", "offset 20: fmt.audio_format: unsupported format tag 6 (A-law)", withFmt(fmtBody(6, 1, hostileRate, 1, 8))),
		structCase("format code MPEG layer 3", "offset 20: fmt.audio_format: unsupported format tag 85 (MPEG layer 3)", withFmt(fmtBody(0x55, 1, hostileRate, 2, 16))),
		structCase("extensible with an unknown sub-format", "offset 44: fmt.sub_format: unsupported SubFormat GUID", withFmt(ext(1, make([]byte, 14)))),
		structCase("extensible with a compressed sub-format", "offset 44: fmt.sub_format: unsupported format tag 2 (MS ADPCM)", withFmt(ext(2, pcmGUIDTail))),
		structCase("extensible fmt too short", "offset 16: fmt.size: extensible fmt chunk of 16 bytes, want 40", withFmt(fmtBody(0xFFFE, 1, hostileRate, 2, 16))),
		structCase("zero channels", "offset 22: fmt.channels: 0 channels", withFmt(fmtBody(1, 0, hostileRate, 2, 16))),
		structCase("zero sample rate", "offset 24: fmt.sample_rate: sample rate 0", withFmt(fmtBody(1, 1, 0, 2, 16))),
		structCase("zero bits per sample", "offset 34: fmt.bits_per_sample: 0 bits per sample", withFmt(fmtBody(1, 1, hostileRate, 2, 0))),
		structCase("40-bit PCM", "offset 34: fmt.bits_per_sample: 40-bit PCM samples", withFmt(fmtBody(1, 1, hostileRate, 5, 40))),
		structCase("16-bit float", "offset 34: fmt.bits_per_sample: 16-bit float samples", withFmt(fmtBody(3, 1, hostileRate, 2, 16))),
		structCase("wrong block align", "offset 32: fmt.block_align: block align 3, want 2", withFmt(fmtBody(1, 1, hostileRate, 3, 16))),
		structCase("65535 channels", "offset 32: fmt.block_align: block align 2, want 131070 for 65535 channels", withFmt(fmtBody(1, 65535, hostileRate, 2, 16))),
		usedCase("odd-sized chunk with its pad byte", "", func(t *testing.T) []byte {
			return riff(goodFmt(), wavChunk("LIST", 5, []byte("INFOx\x00")), goodData(t))
		}),
		usedCase("unknown chunk before fmt", "", func(t *testing.T) []byte {
			return riff(wavChunk("junk", 4, []byte("abcd")), goodFmt(), goodData(t))
		}),
		usedCase("data size larger than the file", "data size 1000000 runs past the end of the file; clamped to 32000 bytes", func(t *testing.T) []byte {
			return riff(goodFmt(), wavChunk("data", 1000000, pcmSamples(t)))
		}),
		usedCase("data size 0xFFFFFFFF", "data size 0xFFFFFFFF (length unknown)", func(t *testing.T) []byte {
			return riff(goodFmt(), wavChunk("data", 0xFFFFFFFF, pcmSamples(t)))
		}),
		usedCase("RIFF size huge", "", func(t *testing.T) []byte {
			b := riff(goodFmt(), goodData(t))
			copy(b[4:], le32(0xFFFFFFF0))
			return b
		}),
		usedCase("data size not whole frames", "data size 32001 is not a whole number of 2-byte frames", func(t *testing.T) []byte {
			d := append(pcmSamples(t), 0)
			return riff(goodFmt(), wavChunk("data", uint32(len(d)), append(d, 0)))
		}),
		usedCase("wrong byte rate", "fmt byte rate 1 disagrees with sample rate × block align = 16000", func(t *testing.T) []byte {
			b := fmtBody(1, 1, hostileRate, 2, 16)
			copy(b[8:], le32(1))
			return riff(wavChunk("fmt ", 16, b), goodData(t))
		}),
		usedCase("second fmt chunk", "second fmt chunk at offset 36 ignored", func(t *testing.T) []byte {
			return riff(goodFmt(), wavChunk("fmt ", 16, fmtBody(6, 2, 44100, 2, 8)), goodData(t))
		}),
		{name: "declared 2 s, holds none", setup: replaceBad(func(t *testing.T) []byte { return riff(goodFmt(), wavChunk("data", 32000, nil)) }),
			args: []string{"expand", "{plant}", "--out", "{out}", "-q"}, perFile: true, unused: []string{hostileBad},
			want: []string{hostileBad + ": short: 0.00 s is shorter than one clip"}},
		// another rate is resampled to the working rate, not refused
		usedCase("44.1 kHz take", "", func(t *testing.T) []byte {
			return encodeWAV(t, hostileTone(5, 2*44100, 1), 44100, 1, wavio.PCM16)
		}),
	}
	runHostile(t, writeHostilePlant, cases)
}

// floatTake is a 2 s float take of ch channels with v at interleaved
// index at.
func floatTake(enc wavio.Encoding, ch, at int, v float64) func(t *testing.T) []byte {
	return func(t *testing.T) []byte {
		x := hostileTone(41, 2*hostileRate, ch)
		if at >= 0 {
			x[at] = v
		}
		return encodeWAV(t, x, hostileRate, ch, enc)
	}
}

// contentCase is a take whose samples make it unusable: run names it and
// its sample, leaves it out and goes on.
func contentCase(name string, b func(t *testing.T) []byte, want ...string) hostileCase {
	return hostileCase{name: name, setup: replaceBad(b), perFile: true, unused: []string{hostileBad},
		args: []string{"expand", "{plant}", "--out", "{out}", "-q"},
		want: append([]string{hostileBad + ": "}, want...), check: func(t *testing.T, h *hplant, _, _ string) { checkFinite(t, h.out) }}
}

// withArgs sets a case's command.
func withArgs(c hostileCase, args ...string) hostileCase {
	c.args = args
	return c
}

// withRoomStep adds a room step to the recipe of fan-b1's idle condition
// only (the others get a gain step: a very reverberant room's responses
// are long to compute) and gives the hall the size and absorption of room.
func withRoomStep(room string) func(t *testing.T, h *hplant) {
	return func(t *testing.T, h *hplant) {
		h.edit(t, "recipe = \"mix\"", "recipe = \"plain\"") // pump-a1
		h.edit(t, "rpm = 980.0", "rpm = 980.0\n  recipe = \"plain\"")
		h.edit(t, "[[machine]]", "[[recipe]]\nid = \"plain\"\nvariants = 1\n  [[recipe.step]]\n  kind = \"gain\"\n  range = [-1.0, 1.0]\n\n[[machine]]")
		h.edit(t, "size = [8.0, 6.0, 4.0]\nabsorption = 0.3", room)
		h.edit(t, "min_steps = 2\nmax_steps = 2", "min_steps = 3\nmax_steps = 3\n  [[recipe.step]]\n  kind = \"room\"")
	}
}

// rejectsAll checks that every variant of the plant whose steps include
// kind is rejected with reason, and that there is one.
func rejectsAll(kind, reason string) func(t *testing.T, h *hplant, _, _ string) {
	return func(t *testing.T, h *hplant, _, _ string) {
		checkFinite(t, h.out)
		es, err := ledger.ReadTree(h.out)
		if err != nil {
			t.Fatal(err)
		}
		n := 0
		for _, e := range es {
			if e.Stage != ledger.Expand || e.Variant < 0 {
				continue
			}
			for _, s := range e.Steps {
				if s.Kind == kind && (kind != "background" || len(e.Backgrounds) > 0) {
					if e.Kind != ledger.KindRejected || e.Reason != reason {
						t.Errorf("%s clip %d variant %d: %s %q, want rejected %s", e.Source, e.Clip, e.Variant, e.Kind, e.Reason, reason)
					}
					n++
					break
				}
			}
		}
		if n == 0 {
			t.Errorf("no variant with a %s step", kind)
		}
	}
}

// roomMeasured checks that every variant with a room step is written with
// a finite RT60 in its step, or rejected with a reason, and that one is
// written.
func roomMeasured(t *testing.T, h *hplant, _, _ string) {
	checkFinite(t, h.out)
	es, err := ledger.ReadTree(h.out)
	if err != nil {
		t.Fatal(err)
	}
	written := 0
	for _, e := range es {
		for _, st := range e.Steps {
			if st.Kind != "room" || e.Stage != ledger.Expand {
				continue
			}
			switch {
			case e.Kind == ledger.KindRejected && e.Reason == "":
				t.Errorf("%s clip %d: rejected without a reason", e.Source, e.Clip)
			case e.Kind == ledger.KindOutput:
				if _, ok := st.Params["rt60_s"]; !ok {
					t.Errorf("%s clip %d: room step without rt60_s: %v", e.Source, e.Clip, st.Params)
				}
				written++
			}
		}
	}
	if written == 0 {
		t.Error("no variant with a room step written")
	}
}

func TestHostileWAVContent(t *testing.T) {
	silentBg := func(t *testing.T, h *hplant) {
		h.put(t, "backgrounds/bg-2.wav", encodeWAV(t, make([]float64, 3*hostileRate), hostileRate, 1, wavio.PCM16))
	}
	nanBg := func(t *testing.T, h *hplant) {
		// every background holds a NaN: whichever the training share is
		for k := 1; k <= 3; k++ {
			x := hostileTone(uint64(100+k), 3*hostileRate, 1)
			x[777] = math.NaN()
			h.put(t, fmt.Sprintf("backgrounds/bg-%d.wav", k), encodeWAV(t, x, hostileRate, 1, wavio.Float32))
		}
	}
	cases := []hostileCase{
		{name: "clean plant, bad take in a training group", perFile: true, check: func(t *testing.T, h *hplant, _, _ string) {
			// the cases below spoil a take whose clips train: a control
			lists, err := os.ReadFile(filepath.Join(h.out, "splits", "lists.csv"))
			if err != nil {
				t.Fatal(err)
			}
			found := false
			for _, l := range strings.Split(string(lists), "\n") {
				found = found || (strings.Contains(l, ",train,") && strings.Contains(l, strings.TrimSuffix(path.Base(hostileBad), ".wav")) && strings.Contains(l, "pump-a1/duty/recorded/"))
			}
			if !found {
				t.Errorf("%s has no training clip: the content cases would not spoil a training group\n%s", hostileBad, lists)
			}
		}},
		contentCase("exact digital silence", func(t *testing.T) []byte {
			return encodeWAV(t, make([]float64, 2*hostileRate), hostileRate, 1, wavio.PCM16)
		}, "silent: all samples are 0; not used"),
		contentCase("NaN samples", floatTake(wavio.Float32, 1, 9000, math.NaN()), "non-finite: sample 9000 of channel 0 (byte offset ", ") is NaN"),
		withArgs(contentCase("+Inf samples (training group)", floatTake(wavio.Float32, 1, 3, math.Inf(1)), "non-finite: sample 3 of channel 0 (byte offset ", ") is +Inf"), "run", "{plant}", "--out", "{out}", "-q"),
		contentCase("-Inf samples (training group)", floatTake(wavio.Float32, 1, 2*hostileRate-1, math.Inf(-1)), "non-finite: sample 15999 of channel 0", "is -Inf"),
		contentCase("samples of 1e30", floatTake(wavio.Float32, 1, 100, 1e30), "absurd-sample: sample 100 of channel 0 (byte offset ", "is 1e+30, beyond the sanity limit"),
		contentCase("samples of -1e30 (float64)", func(t *testing.T) []byte {
			x := hostileTone(41, 2*hostileRate, 1)
			x[12345] = -1e30
			var d []byte
			for _, v := range x {
				d = binary.LittleEndian.AppendUint64(d, math.Float64bits(v))
			}
			return riff(wavChunk("fmt ", 16, fmtBody(3, 1, hostileRate, 8, 64)), wavChunk("data", uint32(len(d)), d))
		}, "byte offset 98804)", "absurd-sample: sample 12345 of channel 0", "is -1e+30"),
		contentCase("NaN in the second channel", floatTake(wavio.Float32, 2, 2*500+1, math.NaN()), "non-finite: sample 500 of channel 1", "is NaN"),
		contentCase("silent float take", func(t *testing.T) []byte {
			return encodeWAV(t, make([]float64, 2*hostileRate), hostileRate, 1, wavio.Float32)
		}, "silent: all samples are 0"),
		{name: "float take beyond full scale (in g) is data", setup: replaceBad(func(t *testing.T) []byte {
			x := hostileTone(41, 2*hostileRate, 1)
			for i := range x {
				x[i] *= 35 // peaks near 3.5 g
			}
			return encodeWAV(t, x, hostileRate, 1, wavio.Float32)
		}), perFile: true, args: []string{"expand", "{plant}", "--out", "{out}", "-q"}, check: func(t *testing.T, h *hplant, _, _ string) { checkFinite(t, h.out) }},
		{name: "all-zero background recording", setup: silentBg, exit: exitError,
			want: []string{"plant.toml:" + lineOf(`path = "backgrounds/bg-2.wav"`) + ": background[bg-2].path", "backgrounds/bg-2.wav is silent"}},
		{name: "NaN samples in every background", setup: nanBg, perFile: true, args: []string{"expand", "{plant}", "--out", "{out}", "-q"},
			want:  []string{"background-samples-unusable: background bg-", "sample 777 of channel 0 is NaN"},
			check: rejectsAll("background", "background-samples-unusable")},
		// The two rooms that once aborted the stage: their long tails are now
		// measured, so the run goes on and each room variant is either
		// written with its RT60 or rejected for it, by name.
		{name: "very reverberant room (14 x 11 x 8 m, absorption 0.04)", parallel: true, setup: withRoomStep("size = [14.0, 11.0, 8.0]\nabsorption = 0.04"),
			args: expandArgs, perFile: true, want: []string{"rt60-outside-room-range"}, check: rejectsAll("room", "rt60-outside-room-range")},
		{name: "very reverberant room (walls 0.05, ceiling 0.2)", parallel: true, setup: withRoomStep("size = [14.0, 11.0, 8.0]\nabsorption = [0.05, 0.05, 0.05, 0.05, 0.05, 0.2]"),
			args: expandArgs, perFile: true, check: roomMeasured},
		// a room whose T30 cannot be measured in its response's length
		{name: "room too reverberant for T30 (absorption 0.015)", parallel: true, setup: withRoomStep("size = [14.0, 11.0, 8.0]\nabsorption = 0.015"),
			args: expandArgs, perFile: true, want: []string{"rt60-unmeasurable: room hall, microphone "}, check: rejectsAll("room", "rt60-unmeasurable")},
	}
	runHostile(t, writeHostilePlant, cases)
}

// expandArgs is the expand command most per-file cases run.
var expandArgs = []string{"expand", "{plant}", "--out", "{out}", "-q"}

// special makes a file system object named rel in the recordings.
func special(rel string, mk func(p string) error) func(t *testing.T, h *hplant) {
	return func(t *testing.T, h *hplant) {
		if err := mk(h.take(rel)); err != nil {
			t.Skipf("cannot make %s here: %v", rel, err)
		}
	}
}

// hugeTake writes a sparse take declaring almost 4 GiB of samples: reading
// it takes seconds, the disk holds almost nothing.
func hugeTake(t *testing.T, h *hplant) {
	p := h.take("pump-a1/duty/take-huge.wav")
	const size = 0xFFFF0000
	b := riff(goodFmt(), wavChunk("data", size-44, nil))
	copy(b[4:], le32(size-8))
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Truncate(p, size); err != nil {
		t.Skipf("no sparse file here: %v", err)
	}
}

func TestHostileFileSystem(t *testing.T) {
	outside := t.TempDir() // recordings outside the recordings root
	os.WriteFile(filepath.Join(outside, "elsewhere.wav"), encodeWAV(t, hostileTone(55, 2*hostileRate, 1), hostileRate, 1, wavio.PCM16), 0o644)
	chmod := func(rel string, mode fs.FileMode) func(t *testing.T, h *hplant) {
		return func(t *testing.T, h *hplant) {
			if err := os.Chmod(h.path(rel), mode); err != nil {
				t.Fatal(err)
			}
		}
	}
	cases := []hostileCase{
		{name: "FIFO named x.wav among the recordings", process: true, perFile: true,
			setup: special("pump-a1/duty/x.wav", func(p string) error { return syscall.Mkfifo(p, 0o644) }),
			want:  []string{"pump-a1/duty/x.wav: unreadable: ", "not a regular file (named pipe); skipped"}},
		{name: "FIFO named x.wav, survey --strict", process: true, exit: exitProblems, args: []string{"survey", "{plant}", "--strict"},
			setup: special("fan-b1/idle/x.wav", func(p string) error { return syscall.Mkfifo(p, 0o644) }),
			want:  []string{"fan-b1/idle/x.wav", "not a regular file (named pipe)"}},
		{name: "socket named x.wav", process: true, perFile: true, args: expandArgs,
			setup: special("pump-a1/duty/x.wav", func(p string) error { return syscall.Mknod(p, syscall.S_IFSOCK|0o644, 0) }),
			want:  []string{"pump-a1/duty/x.wav: unreadable: ", "(socket); skipped"}},
		{name: "character device named x.wav", process: true, perFile: true, args: expandArgs,
			setup: special("pump-a1/duty/x.wav", func(p string) error { return syscall.Mknod(p, syscall.S_IFCHR|0o644, 1<<8|3) }),
			want:  []string{"pump-a1/duty/x.wav: unreadable: ", "(device); skipped"}},
		{name: "folder named x.wav", perFile: true, args: expandArgs,
			setup: special("pump-a1/duty/x.wav", func(p string) error { return os.Mkdir(p, 0o755) })},
		{name: "symlink to a recording outside the recordings root", perFile: true, args: expandArgs,
			setup: special("pump-a1/duty/take-05.wav", func(p string) error { return os.Symlink(filepath.Join(outside, "elsewhere.wav"), p) })},
		// take-06's group would go to eval: without the duplicate rule the
		// audit finds take-03's sound in train and eval
		{name: "symlink to another recording inside the root", perFile: true,
			setup: special("pump-a1/duty/take-06.wav", func(p string) error { return os.Symlink("take-03.wav", p) }),
			want:  []string{"pump-a1/duty/take-06.wav: duplicate: same content (sha256 ", ") as pump-a1/duty/take-03.wav; not used"}},
		{name: "hard link to another recording", perFile: true, args: expandArgs,
			setup: special("fan-b1/idle/take-07.wav", func(p string) error { return os.Link(filepath.Join(filepath.Dir(p), "take-01.wav"), p) }),
			want:  []string{"fan-b1/idle/take-07.wav: duplicate: same content (sha256 ", ") as fan-b1/idle/take-01.wav; not used"}},
		{name: "dangling symlink", perFile: true, args: expandArgs,
			setup: special("pump-a1/duty/x.wav", func(p string) error { return os.Symlink("gone.wav", p) }),
			want:  []string{"pump-a1/duty/x.wav: unreadable: ", "no such file or directory"}},
		{name: "symlink loop", perFile: true, args: expandArgs,
			setup: special("pump-a1/duty/x.wav", func(p string) error { return os.Symlink("x.wav", p) }),
			want:  []string{"pump-a1/duty/x.wav: unreadable: ", "too many levels of symbolic links"}},
		{name: "recordings root is a symlink", perFile: true, args: expandArgs, setup: func(t *testing.T, h *hplant) {
			real := filepath.Join(h.dir, "real-recordings")
			if err := os.Rename(h.rec, real); err != nil {
				t.Fatal(err)
			}
			if err := os.Symlink("real-recordings", h.rec); err != nil {
				t.Fatal(err)
			}
		}},
		{name: "folder of an unknown machine", perFile: true, args: expandArgs,
			setup: special("pump-zz", func(p string) error { return os.Mkdir(p, 0o755) }),
			want:  []string{"pump-zz: unknown-folder: folder matches no machine id in the plant file"}},
		{name: "name with spaces and non-ASCII, upper-case .WAV", perFile: true, args: expandArgs, setup: func(t *testing.T, h *hplant) {
			h.put(t, "recordings/pump-a1/duty/Take 05 Prüfstand.WAV", encodeWAV(t, hostileTone(61, 2*hostileRate, 1), hostileRate, 1, wavio.PCM16))
		}, check: func(t *testing.T, h *hplant, _, _ string) {
			es, _ := ledger.ReadTree(h.out)
			n := 0
			for _, e := range es {
				if e.Source == "pump-a1/duty/Take 05 Prüfstand.WAV" && e.Variant == -1 {
					n++
				}
			}
			if n != 2 {
				t.Errorf("%d recorded clips of the odd name, want 2", n)
			}
		}},
		{name: "recordings root missing", exit: exitError, args: expandArgs,
			setup: func(t *testing.T, h *hplant) { os.RemoveAll(h.rec) },
			want:  []string{"{plant}", "recordings root", "{rec}"}},
		{name: "recordings root is a file", exit: exitError, args: expandArgs,
			setup: func(t *testing.T, h *hplant) { os.RemoveAll(h.rec); h.put(t, "recordings", []byte("x")) },
			want:  []string{"{plant}", "recordings root", "{rec}"}},
		{name: "unreadable recording (unprivileged user)", user: true, perFile: true, unused: []string{hostileBad}, args: expandArgs,
			setup: chmod("recordings/"+hostileBad, 0), want: []string{hostileBad + ": unreadable: ", "permission denied"}},
		{name: "unreadable condition folder (unprivileged user)", user: true, args: expandArgs,
			setup: chmod("recordings/fan-b1/idle", 0), want: []string{"fan-b1/idle: unreadable: condition folder fan-b1/idle: ", "permission denied"},
			check: func(t *testing.T, h *hplant, _, _ string) { os.Chmod(h.path("recordings/fan-b1/idle"), 0o755) }},
		{name: "read-only OUT (unprivileged user)", user: true, exit: exitError, args: expandArgs,
			setup: func(t *testing.T, h *hplant) { os.Mkdir(h.out, 0o555) }, want: []string{"{out}", "permission denied"}},
		{name: "unreadable plant file (unprivileged user)", user: true, exit: exitError, args: expandArgs,
			setup: chmod("plant.toml", 0), want: []string{"{plant}", "permission denied"}},
		{name: "unreadable background (unprivileged user)", user: true, exit: exitError, args: expandArgs,
			setup: chmod("backgrounds/bg-3.wav", 0),
			want:  []string{"plant.toml:" + lineOf(`path = "backgrounds/bg-3.wav"`) + ": background[bg-3].path", "permission denied"}},
		{name: "SIGINT during scan (survey)", setup: hugeTake, interrupt: 700 * time.Millisecond, exit: exitInterrupted,
			args: []string{"survey", "{plant}"}, want: []string{"interrupted"}},
		// split and audit read no recordings: TestInterruptStopsLongCommands
		// interrupts them on a large plant
		{name: "SIGINT during scan (expand)", setup: hugeTake, interrupt: 700 * time.Millisecond, exit: exitInterrupted,
			args: expandArgs, want: []string{"interrupted"}},
	}
	runHostile(t, writeHostilePlant, cases)
}

// configCase edits plant.toml (old → new) and expects loading to refuse it
// naming the file, the line of the key and the key.
func configCase(name, old, new, key string, want ...string) hostileCase {
	return hostileCase{name: name, exit: exitError, args: expandArgs,
		setup: func(t *testing.T, h *hplant) { h.edit(t, old, new) },
		want:  append([]string{"{plant}:" + lineOf(old) + ": " + key}, want...)}
}

func TestHostileConfig(t *testing.T) {
	cases := []hostileCase{
		configCase("NaN in a zone corner", "min = [1.0, 1.0, 1.0]", "min = [nan, 1.0, 1.0]", "zone[near].min", "NaN"),
		configCase("position = [nan, …]", "position = [5.0, 4.0, 1.0]", "position = [nan, 4.0, 1.0]", "machine[pump-a1].position", "NaN"),
		configCase("inf in a room size", "size = [8.0, 6.0, 4.0]", "size = [inf, 6.0, 4.0]", "room[hall].size", "Inf"),
		configCase("-inf rpm", "rpm = 1480.0", "rpm = -inf", "machine[pump-a1].condition[duty].rpm", "Inf"),
		configCase("NaN in a step range", "range = [-3.0, 3.0]", "range = [nan, 3.0]", "recipe[mix].step[0].range", "NaN"),
		configCase("variants = 0", "variants = 1", "variants = 0", "recipe[mix].variants"),
		configCase("clip_seconds = 0", "clip_seconds = 1.0", "clip_seconds = 0", "clip_seconds"),
		configCase("seed = -1", "seed = 31", "seed = -1", "seed"),
		configCase(`rpm = "1485" (a string, at its own line)`, "rpm = 980.0", `rpm = "1485"`, "machine[1].condition[0].rpm", "has type string"),
		configCase("unknown key", "blades = 5", "blade = 5", "machine[1].blade: unknown key"),
		configCase("missing background file", `path = "backgrounds/bg-2.wav"`, `path = "backgrounds/missing.wav"`, "background[bg-2].path", "missing.wav"),
		// a background at another rate is resampled to the working rate
		{name: "44.1 kHz background", exit: exitOK, args: expandArgs, setup: func(t *testing.T, h *hplant) {
			h.put(t, "backgrounds/bg-1.wav", encodeWAV(t, hostileTone(3, 44100, 1), 44100, 1, wavio.PCM16))
		}},
		{name: "background is a folder", exit: exitError, args: expandArgs, setup: func(t *testing.T, h *hplant) {
			os.Remove(h.path("backgrounds/bg-1.wav"))
			os.Mkdir(h.path("backgrounds/bg-1.wav"), 0o755)
		}, want: []string{"{plant}:" + lineOf(`path = "backgrounds/bg-1.wav"`) + ": background[bg-1].path", "not a regular file"}},
		{name: "background is not a WAV", exit: exitError, args: expandArgs, setup: func(t *testing.T, h *hplant) {
			h.put(t, "backgrounds/bg-1.wav", []byte("hello"))
		}, want: []string{"{plant}:" + lineOf(`path = "backgrounds/bg-1.wav"`) + ": background[bg-1].path", "riff"}},
		{name: "FIFO as a background", exit: exitError, process: true, args: expandArgs, setup: func(t *testing.T, h *hplant) {
			os.Remove(h.path("backgrounds/bg-1.wav"))
			if err := syscall.Mkfifo(h.path("backgrounds/bg-1.wav"), 0o644); err != nil {
				t.Skip(err)
			}
		}, want: []string{"{plant}:" + lineOf(`path = "backgrounds/bg-1.wav"`) + ": background[bg-1].path", "is not a regular file"}},
		configCase("band_percent out of range", "band_percent = 2.0", "band_percent = 80.0", "machine[pump-a1].condition[duty].band_percent"),
		configCase("absorption above 1", "absorption = 0.3", "absorption = 1.5", "room[hall].absorption"),
		configCase("duplicate machine id", `id = "fan-b1"`, `id = "pump-a1"`, "machine[1].id", "duplicate machine id"),
		configCase("machine id escaping its folder", `id = "fan-b1"`, `id = "../fan-b1"`, "machine[1].id", "is not a valid id"),
		configCase("unknown room", `room = "hall"
zone = "near"
position = [5.0`, `room = "attic"
zone = "near"
position = [5.0`, "machine[pump-a1].room", "attic"),
		configCase("min_steps above max_steps", "min_steps = 2", "min_steps = 3", "recipe[mix].min_steps"),
		{name: "remainder of an unknown mode", exit: exitError, args: expandArgs,
			setup: func(t *testing.T, h *hplant) {
				h.edit(t, "clip_seconds = 1.0", "clip_seconds = 1.0\nremainder = \"keep\"")
			},
			want: []string{"{plant}:5: remainder", `"keep" is not one of drop, pad`}},
		configCase("sample_rate = 0", "sample_rate = 8000", "sample_rate = 0", "sample_rate"),
		{name: "TOML syntax error", exit: exitError, args: expandArgs,
			setup: func(t *testing.T, h *hplant) { h.edit(t, "blades = 6", "blades = = 6") },
			want:  []string{"{plant}", lineOf("blades = 6")}},
		{name: "unknown command", exit: exitUsage, args: []string{"frobnicate", "{plant}"}, want: []string{`unknown command "frobnicate"`}},
		{name: "unknown flag", exit: exitUsage, args: []string{"expand", "{plant}", "--out", "{out}", "--variants", "3"}, want: []string{"unknown flag: --variants"}},
		{name: "plant file missing", exit: exitError, args: []string{"expand", "{dir}/nope.toml", "--out", "{out}", "-q"},
			want: []string{"{dir}/nope.toml"}},
	}
	runHostile(t, writeHostilePlant, cases)
}

// firstRun runs args (placeholders filled from h) as a step of a setup,
// which must succeed.
func firstRun(t *testing.T, h *hplant, args ...string) {
	t.Helper()
	var full []string
	for _, a := range args {
		full = append(full, strings.NewReplacer("{plant}", h.plant, "{out}", h.out).Replace(a))
	}
	if _, stderr, code := cli(t, full...); code != exitOK {
		t.Fatalf("%v: exit %d: %s", args, code, stderr)
	}
}

// outputsOf lists the expand outputs of the takes, clips 0 and 1, of
// variant v (-1: the recorded clips).
func outputsOf(takes []string, v int) []string {
	var out []string
	for _, rel := range takes {
		d, name := path.Split(strings.TrimSuffix(rel, ".wav"))
		for c := range 2 {
			if v < 0 {
				out = append(out, fmt.Sprintf("%srecorded/%s-c%04d.wav", d, name, c))
			} else {
				out = append(out, fmt.Sprintf("%saugmented/%s-c%04d-v%02d.wav", d, name, c, v))
			}
		}
	}
	return out
}

func TestHostileOut(t *testing.T) {
	reserved := func(id string) hostileCase {
		return configCase("machine id "+id, `id = "fan-b1"`, `id = "`+id+`"`, "machine[1].id", id)
	}
	refused := func(name, out string, setup func(t *testing.T, h *hplant), want ...string) hostileCase {
		return hostileCase{name: name, exit: exitError, args: []string{"run", "{plant}", "--out", out, "-q"}, setup: setup, want: want,
			check: func(t *testing.T, h *hplant, _, _ string) {
				// nothing was written: not even an output folder
				if _, err := os.Stat(filepath.Join(h.rec, "pump-a1", "duty", "recorded")); err == nil {
					t.Error("outputs written inside the recordings")
				}
			}}
	}
	link := func(target, name string) func(t *testing.T, h *hplant) {
		return func(t *testing.T, h *hplant) {
			if err := os.Symlink(target, h.path(name)); err != nil {
				t.Fatal(err)
			}
		}
	}
	deleted := "pump-a1/duty/take-04.wav"
	cases := []hostileCase{
		reserved("report.html"),
		reserved("evaluate"),
		reserved("features"),
		reserved("splits"),
		refused("OUT is the recordings root", "{rec}", nil, "{rec}", "recordings root"),
		refused("OUT inside the recordings", "{rec}/out", nil, "{rec}/out", "recordings root"),
		refused("OUT around the recordings", "{dir}", nil, "{dir}", "recordings root"),
		refused("OUT = /", "/", nil, "recordings root"),
		refused("OUT reached through a symlink into the recordings", "{dir}/link/out", link("recordings", "link"), "{dir}/link/out", "recordings root"),
		refused("symlinked recordings root whose real target holds OUT", "{dir}/real/out", func(t *testing.T, h *hplant) {
			os.Rename(h.rec, h.path("real"))
			link("real", "recordings")(t, h)
		}, "{dir}/real/out", "recordings root"),
		{name: `recordings = "/"`, exit: exitError, setup: func(t *testing.T, h *hplant) { h.edit(t, `recordings = "recordings"`, `recordings = "/"`) },
			want: []string{"{plant}", "the recordings root / ", "is the file-system root"}},
		{name: "OUT is a regular file", exit: exitError, setup: func(t *testing.T, h *hplant) { h.put(t, "out", []byte("x")) },
			want: []string{"{out}"}, check: func(t *testing.T, h *hplant, _, _ string) {
				if b, _ := os.ReadFile(h.out); string(b) != "x" {
					t.Error("the file standing at OUT was changed")
				}
			}},
		{name: "two unsharded runs on one OUT (lock held)", exit: exitError, setup: func(t *testing.T, h *hplant) {
			l, err := ledger.LockOut(context.Background(), h.out, ledger.LockOptions{Command: "thrum run by-another"})
			if err != nil {
				t.Fatal(err)
			}
			h.release = func() { l.Release() }
			h.vars = map[string]string{"pid": fmt.Sprint(os.Getpid())}
		}, want: []string{"output root {out} is in use by pid {pid}", "thrum run by-another"},
			check: func(t *testing.T, h *hplant, _, _ string) {
				if es, _ := ledger.ReadTree(h.out); len(es) != 0 {
					t.Errorf("the refused run wrote %d ledger lines", len(es))
				}
			}},
		{name: "stale lock of a killed run", perFile: true, setup: func(t *testing.T, h *hplant) {
			h.put(t, "out/"+ledger.LockName, []byte("pid 999999999\nhost nowhere\nsince 2001-02-03T04:05:06Z\ncommand thrum run dead\n"))
		}, want: []string{"took over the stale lock", "pid 999999999"}},
		{name: "temporary files of a killed run", perFile: true, setup: func(t *testing.T, h *hplant) {
			firstRun(t, h, "run", "{plant}", "--out", "{out}", "-q")
			for _, f := range []string{"pump-a1/duty/recorded/.take-01-c0000.wav.tmp-123", "pump-a1/duty/augmented/.take-02-c0001-v00.wav.tmp-9",
				"features/.index.csv.tmp-42", "splits/.lists.csv.tmp-7", "pump-a1/.ledger.jsonl.tmp-5", ".report.html.tmp-99"} {
				h.put(t, "out/"+f, []byte("half"))
			}
		}},
		{name: "outputs of a deleted recording", perFile: true, unused: []string{deleted}, args: expandArgs, stale: append(outputsOf([]string{deleted}, -1), outputsOf([]string{deleted}, 0)...),
			setup: func(t *testing.T, h *hplant) {
				firstRun(t, h, expandArgs...)
				os.Remove(h.take(deleted))
			}, want: []string{"pump-a1/duty/recorded/take-04-c0000.wav"}},
		{name: "outputs of fewer variants", perFile: true, args: expandArgs,
			setup: func(t *testing.T, h *hplant) {
				h.edit(t, "variants = 1", "variants = 2")
				firstRun(t, h, expandArgs...)
				// training groups have variants: each has its second
				h.stale = []string{}
				for k := range tree(t, h.out) {
					if strings.HasSuffix(k, "-v01.wav") {
						h.stale = append(h.stale, k)
					}
				}
				if len(h.stale) < 8 {
					t.Fatalf("%d second variants, want at least 8", len(h.stale))
				}
				sort.Strings(h.stale)
				h.vars = map[string]string{"v01": h.stale[0]}
				h.edit(t, "variants = 2", "variants = 1")
			}, want: []string{"expand: moved {v01} to {out}/.stale/"}},
		{name: "outputs of remainder pad then drop", perFile: true, args: expandArgs,
			stale: []string{"pump-a1/duty/recorded/take-04-c0002.wav", "pump-a1/duty/augmented/take-04-c0002-v00.wav"},
			setup: func(t *testing.T, h *hplant) {
				h.put(t, "recordings/"+deleted, encodeWAV(t, hostileTone(4, 2*hostileRate+hostileRate*6/10, 1), hostileRate, 1, wavio.PCM16))
				h.edit(t, "clip_seconds = 1.0", "clip_seconds = 1.0\nremainder = \"pad\"")
				firstRun(t, h, expandArgs...)
				h.edit(t, "remainder = \"pad\"", "remainder = \"drop\"")
			}, want: []string{"pump-a1/duty/recorded/take-04-c0002.wav"}},
		{name: "12 shards of a plant with fewer recordings per machine", perFile: true, setup: func(t *testing.T, h *hplant) {
			for i := range 12 {
				firstRun(t, h, "run", "{plant}", "--out", "{out}", "-q", "--shard", fmt.Sprintf("%d/12", i))
			}
		}, check: func(t *testing.T, h *hplant, _, _ string) {
			ref := filepath.Join(h.dir, "ref")
			firstRun(t, h, "run", "{plant}", "--out", ref, "-q")
			diffTrees(t, tree(t, ref), tree(t, h.out), "12 shards joined vs one run")
		}},
		{name: "replay of an output corrupted on disk", exit: exitProblems, setup: func(t *testing.T, h *hplant) {
			firstRun(t, h, expandArgs...)
			rel := "fan-b1/idle/augmented/take-01-c0001-v00.wav"
			b, err := os.ReadFile(filepath.Join(h.out, rel))
			if err != nil {
				t.Fatal(err)
			}
			good := bytes.Clone(b)
			b[len(b)-2] ^= 0x40
			os.WriteFile(filepath.Join(h.out, rel), b, 0o644)
			h.vars = map[string]string{"bad": rel}
			// replay must not have touched it: put the good bytes back for
			// the ledger check
			h.release = func() {
				if now, _ := os.ReadFile(filepath.Join(h.out, rel)); !bytes.Equal(now, b) {
					t.Error("replay changed the corrupted file")
				}
				os.WriteFile(filepath.Join(h.out, rel), good, 0o644)
			}
		}, args: []string{"replay", "{plant}", "--out", "{out}", "{bad}", "pump-a1/duty/augmented/take-03-c0000-v00.wav"},
			want: []string{"FAIL {bad}: file on disk differs (corrupted or edited): {out}/{bad}", "ok   pump-a1/duty/augmented/take-03-c0000-v00.wav"},
		},
	}
	runHostile(t, writeHostilePlant, cases)
}
