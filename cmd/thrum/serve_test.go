package main

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"thrum/augment/online"
	"thrum/machine/demoplant"
)

// lineWriter is a goroutine-safe writer that reports the served address.
type lineWriter struct {
	mu   sync.Mutex
	buf  bytes.Buffer
	addr chan string
	sent bool
}

var servingRE = regexp.MustCompile(`serving (http://\S+)/v1/`)

func (w *lineWriter) Write(p []byte) (int, error) {
	w.mu.Lock()
	defer w.mu.Unlock()
	w.buf.Write(p)
	if m := servingRE.FindStringSubmatch(w.buf.String()); m != nil && !w.sent && w.addr != nil {
		w.sent = true
		w.addr <- m[1]
	}
	return len(p), nil
}

func (w *lineWriter) String() string {
	w.mu.Lock()
	defer w.mu.Unlock()
	return w.buf.String()
}

// servePlant is a split output root of the demo plant with 3 s recordings.
func servePlant(t *testing.T) (plant, out string) {
	t.Helper()
	dir := t.TempDir()
	plant, err := demoplant.Write(dir, demoplant.Options{Seconds: 3})
	if err != nil {
		t.Fatal(err)
	}
	out = filepath.Join(dir, "out")
	for _, stage := range []string{"expand", "split"} {
		args := []string{stage, plant, "--out", out}
		if stage == "expand" {
			args = append(args, "-q")
		}
		if stdout, stderr, code := cli(t, args...); code != exitOK {
			t.Fatalf("%s exit %d\n%s\n%s", stage, code, stdout, stderr)
		}
	}
	return plant, out
}

// startServe runs serve in-process until the returned stop is called, which
// returns the command's error.
func startServe(t *testing.T, args ...string) (base string, stop func() error) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	w := &lineWriter{addr: make(chan string, 1)}
	var errb bytes.Buffer
	root := newRootCmd(w, &errb)
	root.SetArgs(append([]string{"--no-caution", "serve", "--addr", "127.0.0.1:0"}, args...))
	done := make(chan error, 1)
	go func() { done <- root.ExecuteContext(ctx) }()
	select {
	case base = <-w.addr:
	case err := <-done:
		cancel()
		t.Fatalf("serve ended before serving: %v\n%s\n%s", err, w.String(), errb.String())
	}
	return base, func() error { cancel(); return <-done }
}

// TestServeCommand: serve hands out a batch, stops cleanly on
// cancellation (as on SIGINT) with its record written, and replay
// --served regenerates an item of it; a non-loopback address without a
// token is refused.
func TestServeCommand(t *testing.T) {
	plant, out := servePlant(t)
	base, stop := startServe(t, plant, "--out", out, "-j", "2")
	resp, err := http.Get(base + "/v1/info")
	if err != nil {
		t.Fatal(err)
	}
	var info online.Info
	json.NewDecoder(resp.Body).Decode(&info)
	resp.Body.Close()
	if len(info.Machines) == 0 {
		t.Fatalf("info: no machines")
	}
	m := info.Machines[0].Machine
	q := "?machine=" + m + "&epoch=3&batch=0&size=2"
	resp, err = http.Get(base + "/v1/batch" + q)
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != 200 || !bytes.HasPrefix(body, []byte("\x93NUMPY")) {
		t.Fatalf("batch: %d %.200q", resp.StatusCode, body)
	}
	resp, err = http.Get(base + "/v1/describe" + q)
	if err != nil {
		t.Fatal(err)
	}
	var d online.Description
	json.NewDecoder(resp.Body).Decode(&d)
	resp.Body.Close()
	if len(d.Items) != 2 || resp.Header.Get("Content-Type") != "application/json" {
		t.Fatalf("describe: %d items", len(d.Items))
	}
	// With 3 s recordings of one clip each, a speed-up has no source span
	// (no-room-for-speed): such draws are replaced by the next seeded
	// attempt and listed, and the item served is the first draw the guard
	// passed.
	resp, err = http.Get(base + "/v1/describe?machine=" + m + "&epoch=0&batch=0&size=" + strconv.Itoa(min(info.Machines[0].TrainingClips, info.MaxBatch)))
	if err != nil {
		t.Fatal(err)
	}
	var all online.Description
	json.NewDecoder(resp.Body).Decode(&all)
	resp.Body.Close()
	replaced := 0
	for _, it := range all.Items {
		if it.Attempt != len(it.Rejected) && it.Fallback == "" {
			t.Errorf("%s: attempt %d after %d rejections", it.ID, it.Attempt, len(it.Rejected))
		}
		for _, r := range it.Rejected {
			if r.Reason == "" || r.Seed == it.Seed {
				t.Errorf("%s: rejection %+v (served seed %d)", it.ID, r, it.Seed)
			}
		}
		replaced += len(it.Rejected)
	}
	if replaced == 0 || all.RejectionsReplaced != replaced {
		t.Errorf("epoch 0 of %s: %d rejections replaced in the items, %d in the batch; want some (speed-ups without room)", m, replaced, all.RejectionsReplaced)
	}
	if err := stop(); err != nil {
		t.Fatalf("serve after the stop: %v, want a clean end", err)
	}
	if _, err := os.Stat(online.RecordPath(out, m)); err != nil {
		t.Errorf("no served record: %v", err)
	}
	stdout, stderr, code := cli(t, "replay", plant, "--out", out, "--served", d.Items[1].ID)
	if code != exitOK || !strings.Contains(stdout, "ok   "+d.Items[1].ID) || !strings.Contains(stdout, d.Items[1].SHA256) {
		t.Errorf("replay --served: exit %d\n%s\n%s", code, stdout, stderr)
	}
	// an item of a batch never served
	stdout, _, code = cli(t, "replay", plant, "--out", out, "--served", m+"/e4/p0")
	if code != exitProblems || !strings.Contains(stdout, "FAIL") {
		t.Errorf("replay of an unserved item: exit %d\n%s", code, stdout)
	}
	os.Unsetenv(tokenEnv)
	if _, stderr, code := cli(t, "serve", plant, "--out", out, "--addr", "0.0.0.0:0"); code != exitUsage || !strings.Contains(stderr, "access token") {
		t.Errorf("serve on 0.0.0.0 without a token: exit %d %s", code, stderr)
	}
}

// TestServePythonClient runs README's client loop (python3 with numpy)
// against a server the test starts; it skips without them.
func TestServePythonClient(t *testing.T) {
	// the system python, as the numpy cross-checks use
	python, err := exec.LookPath("/usr/bin/python3")
	if err != nil {
		t.Skip("no python3")
	}
	if err := exec.Command(python, "-c", "import numpy").Run(); err != nil {
		t.Skip("no numpy")
	}
	src := readmeBlock(t, "# thrum serve client")
	plant, out := servePlant(t)
	base, stop := startServe(t, plant, "--out", out, "-j", "2")
	defer stop()
	cmd := exec.Command(python, "-c", src)
	cmd.Env = append(os.Environ(), "THRUM_URL="+base, "THRUM_EPOCHS=2")
	cmd.WaitDelay = time.Second
	b, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("client: %v\n%s", err, b)
	}
	if !strings.Contains(string(b), "epoch 1 batch 0 (") {
		t.Errorf("client output:\n%s", b)
	}
	t.Logf("%s", b)
}

// readmeBlock returns the README code block whose first line is first.
func readmeBlock(t *testing.T, first string) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	s := string(b)
	i := strings.Index(s, "```python\n"+first+"\n")
	if i < 0 {
		t.Fatalf("README has no python block starting %q", first)
	}
	s = s[i+len("```python\n"):]
	return s[:strings.Index(s, "```")]
}

// TestServeSignals: SIGINT and SIGTERM stop a running server cleanly: it
// closes its record and exits with code 0.
func TestServeSignals(t *testing.T) {
	plant, out := servePlant(t)
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM} {
		cmd := exec.Command(exe, "--no-caution", "serve", plant, "--out", out, "--addr", "127.0.0.1:0", "-j", "1")
		cmd.Env = append(os.Environ(), "THRUM_AS_CLI=1")
		w := &lineWriter{addr: make(chan string, 1)}
		var errb lineWriter
		cmd.Stdout, cmd.Stderr = w, &errb
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan error, 1)
		go func() { done <- cmd.Wait() }()
		var base string
		select {
		case base = <-w.addr:
		case err := <-done:
			t.Fatalf("serve ended before serving: %v\n%s", err, errb.String())
		}
		resp, err := http.Get(base + "/v1/info")
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		cmd.Process.Signal(sig)
		err = <-done
		if code := cmd.ProcessState.ExitCode(); code != exitOK || !strings.Contains(errb.String(), "serve: stopped") {
			t.Errorf("%v: exit %d (%v)\n%s", sig, code, err, errb.String())
		}
	}
}
