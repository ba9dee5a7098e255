// Command thrum builds acoustic anomaly-detection training sets for plant
// machinery: survey, physics-aware augmentation, synthetic fault cues,
// evaluation-safe splits, features and an audit, with a ledger per machine.
//
// Exit codes: 0 success; 1 error; 2 bad usage (unknown command, bad flag or
// argument); 3 the run finished but found problems (survey --strict, a
// failed audit, a replay mismatch); 130 interrupted (SIGINT or SIGTERM;
// serve, which runs until stopped, exits 0 then).
package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/signal"
	"runtime/debug"
	"strings"
	"syscall"
)

// Exit codes.
const (
	exitOK       = 0
	exitError    = 1
	exitUsage    = 2
	exitProblems = 3
	// exitInterrupted is the shells' code for a process ended by SIGINT
	// (128 + 2); thrum stops at a clean point and exits with it.
	exitInterrupted = 130
)

// problemsError means the command ran but found problems; main maps it to
// exit code 3.
type problemsError struct{ msg string }

func (e *problemsError) Error() string { return e.msg }

// usageError is a bad command line.
type usageError struct{ err error }

func (e *usageError) Error() string { return e.err.Error() }

// memoryLimit is the soft heap limit thrum sets unless GOMEMLIMIT is given:
// the stages allocate large short-lived buffers (clips, spectra), and the
// limit makes the collector return them before the heap grows far past the
// live set, so peak memory stays flat as the corpus grows.
const memoryLimit = 192 << 20

func main() {
	if os.Getenv("GOMEMLIMIT") == "" {
		debug.SetMemoryLimit(memoryLimit)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	root := newRootCmd(os.Stdout, os.Stderr)
	err := root.ExecuteContext(ctx)
	os.Exit(exitCode(err))
}

func exitCode(err error) int {
	if err == nil {
		return exitOK
	}
	if errors.Is(err, context.Canceled) {
		fmt.Fprintln(os.Stderr, "thrum: interrupted; what is written is complete: rerun the same command to resume")
	} else {
		fmt.Fprintln(os.Stderr, "thrum:", err)
	}
	return exitCodeQuiet(err)
}

// exitCodeQuiet maps an error to its documented exit code.
func exitCodeQuiet(err error) int {
	var pe *problemsError
	var ue *usageError
	switch {
	case err == nil:
		return exitOK
	case errors.As(err, &pe):
		return exitProblems
	case errors.As(err, &ue):
		return exitUsage
	case errors.Is(err, context.Canceled):
		return exitInterrupted
	case strings.HasPrefix(err.Error(), "unknown command "):
		// cobra's error for a command name it does not know has no type of
		// its own.
		return exitUsage
	}
	return exitError
}
