package main

import (
	"bytes"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine"
)

// Every exit code README documents, each given by a real command run as its
// own process (main maps errors to codes and exits).
func TestExitCodes(t *testing.T) {
	if testing.Short() {
		t.Skip("spawns processes")
	}
	dir := t.TempDir()
	// A plant whose recordings root exists but holds no recording: survey
	// finds problems (a condition without recordings).
	src, err := os.ReadFile("../../testdata/plant/minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	plant := filepath.Join(dir, "plant.toml")
	if err := os.WriteFile(plant, src, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Mkdir(filepath.Join(dir, "recordings"), 0o755); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name   string
		args   []string
		code   int
		stderr string
	}{
		{"success", []string{"exposure", "85"}, exitOK, ""},
		{"version", []string{"--version"}, exitOK, ""},
		{"error", []string{"survey", filepath.Join(dir, "missing.toml")}, exitError, "missing.toml"},
		{"unknown command", []string{"frobnicate"}, exitUsage, `unknown command "frobnicate"`},
		{"bad flag", []string{"survey", "--bogus", plant}, exitUsage, "unknown flag: --bogus"},
		{"missing argument", []string{"survey"}, exitUsage, "accepts 1 arg"},
		{"problems", []string{"survey", "--strict", plant}, exitProblems, ""},
		{"evaluate without features", []string{"evaluate", dir}, exitError, "index.csv"},
		{"evaluate bad rounds", []string{"evaluate", dir, "--rounds", "0"}, exitUsage, "--rounds 0"},
	}
	exe, err := os.Executable()
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cmd := exec.Command(exe, append([]string{"--no-caution"}, c.args...)...)
			cmd.Env = append(os.Environ(), "THRUM_AS_CLI=1")
			var stdout, stderr bytes.Buffer
			cmd.Stdout, cmd.Stderr = &stdout, &stderr
			err := cmd.Run()
			code := 0
			var ee *exec.ExitError
			if errors.As(err, &ee) {
				code = ee.ExitCode()
			} else if err != nil {
				t.Fatal(err)
			}
			if code != c.code || !strings.Contains(stderr.String(), c.stderr) {
				t.Errorf("exit %d, want %d; stderr %q, want …%s…", code, c.code, stderr.String(), c.stderr)
			}
			if c.name == "version" && stdout.String() != machine.ToolVersion+"\n" {
				t.Errorf("--version printed %q, want %q once", stdout.String(), machine.ToolVersion)
			}
		})
	}
	t.Run("interrupted", func(t *testing.T) {
		plant := demo(t)
		out := filepath.Join(filepath.Dir(plant), "out")
		cmd := exec.Command(exe, "--no-caution", "run", plant, "--out", out, "-q")
		cmd.Env = append(os.Environ(), "THRUM_AS_CLI=1")
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan struct{})
		go func() { cmd.Wait(); close(done) }()
		// Interrupt once expand has written a few clips: run is then inside a
		// stage that watches its context.
		if !waitForFiles(out, 5, done) {
			t.Fatalf("run ended before writing: %s", stderr.String())
		}
		if err := cmd.Process.Signal(os.Interrupt); err != nil {
			t.Fatal(err)
		}
		<-done
		if code := cmd.ProcessState.ExitCode(); code != exitInterrupted || !strings.Contains(stderr.String(), "interrupted") {
			t.Errorf("exit %d, want %d; stderr %q", code, exitInterrupted, stderr.String())
		}
	})
}
