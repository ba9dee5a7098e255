package main

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"testing"
	"time"

	"thrum/machine"
	"thrum/machine/demoplant"
	"thrum/machine/ledger"
)

// TestMain lets the test binary act as the thrum command when THRUM_AS_CLI
// is set, so process-level tests (SIGKILL and resume) need no separate build.
func TestMain(m *testing.M) {
	if os.Getenv("THRUM_AS_CLI") == "1" {
		main()
		return
	}
	os.Exit(m.Run())
}

// cli runs one thrum command in-process and returns stdout, stderr and the
// exit code main would give.
func cli(t testing.TB, args ...string) (string, string, int) {
	t.Helper()
	var out, errb bytes.Buffer
	root := newRootCmd(&out, &errb)
	root.SetArgs(append([]string{"--no-caution"}, args...))
	err := root.ExecuteContext(context.Background())
	code := exitOK
	if err != nil {
		errb.WriteString(err.Error())
		code = exitCodeQuiet(err)
	}
	return out.String(), errb.String(), code
}

// demo writes the invented plant with short recordings into a temp folder.
func demo(t testing.TB) string {
	t.Helper()
	dir := t.TempDir()
	p, err := demoplant.Write(dir, demoplant.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// tree returns path → sha256 of every file under root, for byte-identity
// checks. report.html is left out: it is the human summary and carries the
// run's wall time.
func tree(t testing.TB, root string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(root, p)
		if rel == "report.html" {
			return nil
		}
		s := sha256.Sum256(b)
		out[filepath.ToSlash(rel)] = hex.EncodeToString(s[:])
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func diffTrees(t testing.TB, a, b map[string]string, what string) {
	t.Helper()
	var keys []string
	for k := range a {
		keys = append(keys, k)
	}
	for k := range b {
		if _, ok := a[k]; !ok {
			keys = append(keys, k)
		}
	}
	sort.Strings(keys)
	bad := 0
	for _, k := range keys {
		if a[k] != b[k] {
			if bad < 10 {
				t.Errorf("%s: %s differs (%q vs %q)", what, k, short(a[k]), short(b[k]))
			}
			bad++
		}
	}
	if bad > 0 {
		t.Errorf("%s: %d of %d files differ", what, bad, len(keys))
	}
}

func short(s string) string {
	if len(s) > 8 {
		return s[:8]
	}
	return s
}

func TestDemoPipelineCleanAudit(t *testing.T) {
	plant := demo(t)
	out := filepath.Join(filepath.Dir(plant), "out")
	stdout, stderr, code := cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("run exit %d\nstdout:\n%s\nstderr:\n%s", code, stdout, stderr)
	}
	if !strings.Contains(stdout, "audit: clean") {
		t.Errorf("no clean audit verdict in:\n%s", stdout)
	}
	if strings.Contains(stderr, "warning") {
		t.Errorf("the demo run warns:\n%s", stderr)
	}
	for _, f := range []string{"splits/lists.csv", "splits/plan.json", "features/index.csv"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Error(err)
		}
	}
	// every name at the top of OUT is a machine folder or one of the names a
	// machine id may not take
	p, err := machine.Load(plant)
	if err != nil {
		t.Fatal(err)
	}
	top, err := os.ReadDir(out)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range top {
		if p.Machine(e.Name()) == nil && !slices.Contains(machine.ReservedOutNames(), e.Name()) {
			t.Errorf("OUT/%s is neither a machine folder nor in machine.ReservedOutNames", e.Name())
		}
	}
	checkFeaturesOutputs(t, plant, out)
	// a second run redoes nothing and changes no byte
	before := tree(t, out)
	if _, stderr, code := cli(t, "run", plant, "--out", out, "-q"); code != exitOK {
		t.Fatalf("rerun exit %d: %s", code, stderr)
	}
	diffTrees(t, before, tree(t, out), "rerun")
	// a deliberately leaked list makes the audit fail and name the file
	lists := filepath.Join(out, "splits", "lists.csv")
	b, _ := os.ReadFile(lists)
	lines := strings.Split(string(b), "\n")
	leaked := ""
	for i, l := range lines {
		if strings.Contains(l, "/augmented/") && strings.Contains(l, ",train,") {
			lines[i] = strings.Replace(l, ",train,", ",eval,", 1)
			leaked = strings.SplitN(l, ",", 2)[0]
			break
		}
	}
	if leaked == "" {
		t.Fatal("no augmented training row to leak")
	}
	os.WriteFile(lists, []byte(strings.Join(lines, "\n")), 0o644)
	stdout, _, code = cli(t, "audit", out, "--no-near-duplicates")
	if code != exitProblems || !strings.Contains(stdout, leaked) {
		t.Errorf("leaked audit: exit %d, report does not name %s:\n%s", code, leaked, stdout)
	}
}

func TestWorkerCountDoesNotChangeBytes(t *testing.T) {
	plant := demo(t)
	dir := filepath.Dir(plant)
	for _, j := range []string{"1", "2"} {
		out := filepath.Join(dir, "out-j"+j)
		for _, stage := range []string{"expand", "faults"} {
			if _, stderr, code := cli(t, stage, plant, "--out", out, "-q", "-j", j); code != exitOK {
				t.Fatalf("%s -j %s: %s", stage, j, stderr)
			}
		}
	}
	diffTrees(t, tree(t, filepath.Join(dir, "out-j1")), tree(t, filepath.Join(dir, "out-j2")), "-j 1 vs -j 2")
}

// Any shard count gives the single run's bytes once joined: 12 shards is
// more than the demo plant's fan has recordings (8), so some shards have no
// work for it and write empty parts, which the join accepts. (Recordings of
// one clip keep the 16 runs short.)
func TestShardUnionEqualsSingleRun(t *testing.T) {
	plant := shortDemo(t)
	dir := filepath.Dir(plant)
	single := filepath.Join(dir, "single")
	if _, stderr, code := cli(t, "run", plant, "--out", single, "-q"); code != exitOK {
		t.Fatalf("single run: %s", stderr)
	}
	want := tree(t, single)
	for _, n := range []int{3, 12} {
		sharded := filepath.Join(dir, fmt.Sprintf("sharded-%d", n))
		for i := 0; i < n; i++ {
			if _, stderr, code := cli(t, "run", plant, "--out", sharded, "-q", "--shard", fmt.Sprintf("%d/%d", i, n)); code != exitOK {
				t.Fatalf("shard %d/%d: %s", i, n, stderr)
			}
		}
		parts, _ := filepath.Glob(filepath.Join(sharded, "*", ledger.PartsDir, "part-expand-*"))
		if m := len(demoMachines(t, plant)); len(parts) != m*n {
			t.Errorf("%d shards: %d expand parts, want one per machine and shard (%d)", n, len(parts), m*n)
		}
		if _, stderr, code := cli(t, "run", plant, "--out", sharded, "-q"); code != exitOK {
			t.Fatalf("joining run of %d shards: %s", n, stderr)
		}
		diffTrees(t, want, tree(t, sharded), fmt.Sprintf("%d shards vs single run", n))
	}
}

func demoMachines(t testing.TB, plant string) []string {
	t.Helper()
	p, err := machine.Load(plant)
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, m := range p.Machines {
		ids = append(ids, m.ID)
	}
	return ids
}

func TestShardFromScheduler(t *testing.T) {
	env := map[string]string{"SLURM_ARRAY_TASK_ID": "2", "SLURM_ARRAY_TASK_COUNT": "5"}
	s, err := resolveShard("", func(k string) string { return env[k] })
	if err != nil || s.I != 2 || s.N != 5 {
		t.Errorf("slurm: %+v %v", s, err)
	}
	env = map[string]string{"JOB_COMPLETION_INDEX": "3", "THRUM_SHARDS": "4"}
	if s, err = resolveShard("", func(k string) string { return env[k] }); err != nil || s.I != 3 || s.N != 4 {
		t.Errorf("indexed job: %+v %v", s, err)
	}
	if s, err = resolveShard("/4", func(k string) string { return env[k] }); err != nil || s.I != 3 || s.N != 4 {
		t.Errorf("--shard /4 with JOB_COMPLETION_INDEX: %+v %v", s, err)
	}
	for _, bad := range []string{"4/4", "x/2", "1"} {
		if _, err := resolveShard(bad, func(string) string { return "" }); err == nil {
			t.Errorf("--shard %s accepted", bad)
		}
	}
}

func TestOutputInsideRecordingsRefused(t *testing.T) {
	plant := demo(t)
	rec := filepath.Join(filepath.Dir(plant), "recordings")
	for _, out := range []string{rec, filepath.Join(rec, "out")} {
		_, stderr, code := cli(t, "expand", plant, "--out", out, "-q")
		if code == exitOK || !strings.Contains(stderr, "recordings root") {
			t.Errorf("--out %s: exit %d, %s", out, code, stderr)
		}
	}
}

// A write failure (here: a file stands where a machine's output folder must
// go, which fails for root too) stops the stage with an error naming the
// path, and every ledger or journal line written names a complete file.
func TestWriteFailureLeavesNothingHalfRecorded(t *testing.T) {
	plant := demo(t)
	out := filepath.Join(filepath.Dir(plant), "out")
	os.MkdirAll(out, 0o755)
	blocker := filepath.Join(out, "fan-f1")
	os.WriteFile(blocker, []byte("not a folder"), 0o644)
	_, stderr, code := cli(t, "expand", plant, "--out", out, "-q")
	if code == exitOK || !strings.Contains(stderr, "fan-f1") {
		t.Fatalf("expand over a blocked folder: exit %d, %s", code, stderr)
	}
	checkRecorded(t, out)
	if os.Geteuid() != 0 {
		ro := filepath.Join(filepath.Dir(plant), "ro")
		os.MkdirAll(ro, 0o555)
		_, stderr, code := cli(t, "expand", plant, "--out", ro, "-q")
		if code == exitOK || !strings.Contains(stderr, "permission denied") {
			t.Errorf("read-only out: exit %d, %s", code, stderr)
		}
	}
}

// checkRecorded verifies that every output named by a ledger or journal
// line under out exists and hashes to the recorded sha256.
func checkRecorded(t *testing.T, out string) {
	t.Helper()
	files, _ := filepath.Glob(filepath.Join(out, "*", "ledger.jsonl"))
	js, _ := filepath.Glob(filepath.Join(out, "*", ".journal-*.jsonl"))
	for _, f := range append(files, js...) {
		es, err := ledger.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, e := range es {
			if e.Kind != ledger.KindOutput {
				continue
			}
			sum, err := machine.HashFile(filepath.Join(out, filepath.FromSlash(e.Path)))
			if err != nil || sum != e.SHA256 {
				t.Errorf("%s names %s, which is missing or incomplete (%v)", f, e.Path, err)
			}
		}
	}
}

func TestKillAndResume(t *testing.T) {
	if testing.Short() {
		t.Skip("spawns processes")
	}
	plant := demo(t)
	dir := filepath.Dir(plant)
	ref := filepath.Join(dir, "ref")
	if _, stderr, code := cli(t, "run", plant, "--out", ref, "-q"); code != exitOK {
		t.Fatalf("reference run: %s", stderr)
	}
	want := tree(t, ref)
	out := filepath.Join(dir, "killed")
	exe, _ := os.Executable()
	kills := 0
	for i := 0; i < 20; i++ {
		cmd := exec.Command(exe, "--no-caution", "run", plant, "--out", out, "-q")
		cmd.Env = append(os.Environ(), "THRUM_AS_CLI=1")
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan struct{})
		go func() { cmd.Wait(); close(done) }()
		// kill after a growing number of files: points spread over the run
		if waitForFiles(out, 5+i*len(want)/25, done) {
			cmd.Process.Kill()
			kills++
		}
		<-done
		checkRecorded(t, out)
	}
	if _, stderr, code := cli(t, "run", plant, "--out", out, "-q"); code != exitOK {
		t.Fatalf("final resume: %s", stderr)
	}
	got := tree(t, out)
	for k := range got {
		if machine.IsTemp(path.Base(k)) {
			t.Errorf("temporary file %s left after the final resume", k)
		}
	}
	diffTrees(t, want, got, "killed and resumed vs uninterrupted")
	t.Logf("%d of 20 runs were killed before finishing", kills)
}

// waitForFiles polls until root holds at least n files, or gives up after a
// while (the process may have finished): it reports whether n was reached.
func waitForFiles(root string, n int, done <-chan struct{}) bool {
	for {
		select {
		case <-done:
			return false
		default:
		}
		c := 0
		filepath.WalkDir(root, func(_ string, d fs.DirEntry, err error) error {
			if err == nil && !d.IsDir() {
				c++
			}
			return nil
		})
		if c >= n {
			return true
		}
		time.Sleep(2 * time.Millisecond)
	}
}

// Survey of the WAV fixtures: every file is reported, a bad one never
// stops the survey.
func TestSurveyReportsBadFilesAndGoesOn(t *testing.T) {
	dir := t.TempDir()
	cond := filepath.Join(dir, "recordings", "pump-a1", "duty")
	os.MkdirAll(cond, 0o755)
	for _, f := range []string{"truncated.wav", "f32.wav", "s24_ext.wav", "clipped_s16.wav", "garbage.wav", "alaw.wav", "s16_mono.wav"} {
		b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "wav", f))
		if err != nil {
			t.Fatal(err)
		}
		os.WriteFile(filepath.Join(cond, f), b, 0o644)
	}
	plant := filepath.Join(dir, "plant.toml")
	os.WriteFile(plant, []byte(`seed = 1
sample_rate = 16000
recordings = "recordings"
clip_seconds = 0.5
[[machine]]
id = "pump-a1"
kind = "pump"
  [[machine.condition]]
  name = "duty"
  rpm = 1480
  [[machine.condition]]
  name = "idle"
  rpm = 900
`), 0o644)
	stdout, stderr, code := cli(t, "survey", plant, "--json", "--strict")
	if code != exitProblems {
		t.Errorf("--strict with problems: exit %d (%s)", code, stderr)
	}
	for _, want := range []string{
		`"kind": "unreadable"`,               // garbage.wav, alaw.wav
		"unsupported format tag 6",           // A-law told apart from corruption
		`"kind": "warning"`,                  // truncated.wav: data size past the end, clamped
		`"kind": "no-recordings"`,            // condition idle
		`"kind": "short"`,                    // every fixture is shorter than 0.5 s
		`"path": "pump-a1/duty/f32.wav"`,     // float32 read
		`"path": "pump-a1/duty/s24_ext.wav"`, // 24-bit extensible read
		`"path": "pump-a1/duty/clipped_s16.wav"`,
	} {
		if !strings.Contains(stdout, want) {
			t.Errorf("survey JSON lacks %s", want)
		}
	}
	// the clipped fixture reports a non-zero clipped fraction, the clean one zero
	var rep struct {
		Recordings []struct {
			Path   string
			Levels *struct{ Clipped float64 }
		}
	}
	if err := json.Unmarshal([]byte(stdout), &rep); err != nil {
		t.Fatal(err)
	}
	for _, r := range rep.Recordings {
		switch r.Path {
		case "pump-a1/duty/clipped_s16.wav":
			if r.Levels == nil || r.Levels.Clipped <= 0.05 {
				t.Errorf("clipped fixture: levels %+v", r.Levels)
			}
		case "pump-a1/duty/s16_mono.wav":
			if r.Levels == nil || r.Levels.Clipped != 0 {
				t.Errorf("clean fixture: levels %+v", r.Levels)
			}
		}
	}
	text, _, _ := cli(t, "survey", plant)
	if !strings.Contains(text, "pump-a1") || !strings.Contains(text, "problem(s)") {
		t.Errorf("text survey:\n%s", text)
	}
}

func TestExposureCommand(t *testing.T) {
	out, _, code := cli(t, "exposure", "94")
	// NIOSH 98-126: 94 dB(A) → 1 h permitted (3-dB exchange from 85 dB(A) over 8 h)
	if code != exitOK || !strings.Contains(out, "permitted 1 h,") {
		t.Errorf("exposure 94: exit %d\n%s", code, out)
	}
	if _, _, code := cli(t, "exposure", "loud"); code != exitUsage {
		t.Errorf("non-numeric level: exit %d", code)
	}
}

func TestBadConfigNamesKeyAndRange(t *testing.T) {
	plant := demo(t)
	b, _ := os.ReadFile(plant)
	src := strings.Replace(string(b), "contact_angle_deg = 0.0", "contact_angle_deg = 70.0", 1)
	if src == string(b) {
		t.Fatal("demo plant has no contact_angle_deg = 0.0 line")
	}
	os.WriteFile(plant, []byte(src), 0o644)
	_, stderr, code := cli(t, "survey", plant)
	if code != exitError || !strings.Contains(stderr, "contact_angle_deg") || !strings.Contains(stderr, "0 … 45") {
		t.Errorf("exit %d: %s", code, stderr)
	}
}

// Lists mode needs no ledger: a copy of an evaluation clip hidden among the
// training files is found by its fingerprint.
func TestAuditListsModeFindsCopy(t *testing.T) {
	plant := demo(t)
	rec := filepath.Join(filepath.Dir(plant), "recordings", "pump-p1", "duty")
	dir := t.TempDir()
	train, eval := filepath.Join(dir, "train"), filepath.Join(dir, "eval")
	os.MkdirAll(train, 0o755)
	os.MkdirAll(eval, 0o755)
	copyFile := func(src, dst string) {
		b, err := os.ReadFile(src)
		if err != nil {
			t.Fatal(err)
		}
		os.WriteFile(dst, b, 0o644)
	}
	copyFile(filepath.Join(rec, "take-01.wav"), filepath.Join(train, "a.wav"))
	copyFile(filepath.Join(rec, "take-02.wav"), filepath.Join(train, "b.wav"))
	copyFile(filepath.Join(rec, "take-03.wav"), filepath.Join(eval, "c.wav"))
	if out, _, code := cli(t, "audit", "--lists", train, eval); code != exitOK {
		t.Fatalf("distinct recordings flagged (exit %d):\n%s", code, out)
	}
	copyFile(filepath.Join(rec, "take-03.wav"), filepath.Join(train, "hidden.wav"))
	out, _, code := cli(t, "audit", "--lists", train, eval)
	if code != exitProblems || !strings.Contains(out, "hidden.wav") {
		t.Errorf("copy not found (exit %d):\n%s", code, out)
	}
}

// The credibility guard: with an RT60 range the room cannot meet, every
// variant with a room step is rejected, recorded with its reason and not
// written; the others are unaffected.
func TestGuardRejectsAndRecordsReason(t *testing.T) {
	plant := demo(t)
	b, _ := os.ReadFile(plant)
	src := strings.Replace(string(b), "rt60_range = [0.5, 2.5]", "rt60_range = [0.01, 0.02]", 1)
	if src == string(b) {
		t.Fatal("demo plant has no rt60_range = [0.5, 2.5] line")
	}
	os.WriteFile(plant, []byte(src), 0o644)
	out := filepath.Join(filepath.Dir(plant), "out")
	stdout, stderr, code := cli(t, "expand", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("expand: %s", stderr)
	}
	if !strings.Contains(stdout, "rt60-outside-room-range") {
		t.Errorf("summary does not count the rejections:\n%s", stdout)
	}
	rejected, room := 0, 0
	files, _ := filepath.Glob(filepath.Join(out, "*", ledger.FileName))
	for _, f := range files {
		es, err := ledger.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, e := range es {
			hasRoom := false
			for _, s := range e.Steps {
				hasRoom = hasRoom || s.Kind == "room"
			}
			if !hasRoom {
				continue
			}
			room++
			if e.Kind != ledger.KindRejected || e.Reason != "rt60-outside-room-range" || e.Path != "" || e.SHA256 != "" {
				t.Errorf("room variant not rejected as expected: %+v", e)
			}
			if e.Kind == ledger.KindRejected {
				rejected++
				for _, s := range e.Steps {
					if s.Kind == "room" && s.Params["rt60_s"] >= 0.01 && s.Params["rt60_s"] <= 0.02 {
						t.Errorf("rejected for RT60 but its measured RT60 is inside the range: %+v", s)
					}
				}
			}
		}
	}
	if room == 0 || rejected != room {
		t.Errorf("%d room variants, %d rejected", room, rejected)
	}
	checkRecorded(t, out)
}
