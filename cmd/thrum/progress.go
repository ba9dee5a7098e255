package main

import (
	"encoding/json"
	"fmt"
	"io"
	"os"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"thrum/machine/pool"
)

// progressMode is how progress is shown: a bar on a terminal, periodic plain
// lines otherwise, JSON event lines with --json, nothing with --quiet.
type progressMode int

const (
	progressAuto progressMode = iota
	progressJSON
	progressQuiet
)

// renderer turns stage events into output on w. Its callback is called from
// one goroutine at a time (the stage drivers guarantee it).
type renderer struct {
	w     io.Writer
	mode  progressMode
	tty   bool
	mu    sync.Mutex
	bar   *progressbar.ProgressBar
	stage string
	last  time.Time
}

func newRenderer(w io.Writer, mode progressMode) *renderer {
	r := &renderer{w: w, mode: mode}
	if f, ok := w.(*os.File); ok && mode == progressAuto {
		r.tty = term.IsTerminal(int(f.Fd()))
	}
	return r
}

func (r *renderer) event(e pool.Event) {
	r.mu.Lock()
	defer r.mu.Unlock()
	switch r.mode {
	case progressQuiet:
		return
	case progressJSON:
		b, _ := json.Marshal(map[string]any{"event": "progress", "stage": e.Stage, "machine": e.Machine,
			"done": e.Done, "total": e.Total, "unit": e.Unit, "written": e.Written, "rejected": e.Rejected, "path": e.Path})
		fmt.Fprintf(r.w, "%s\n", b)
		return
	}
	if r.tty {
		if r.bar == nil || r.stage != e.Stage {
			r.finishLocked()
			r.stage = e.Stage
			r.bar = progressbar.NewOptions64(e.Total, progressbar.OptionSetWriter(r.w),
				progressbar.OptionSetDescription(fmt.Sprintf("%-9s", e.Stage)), progressbar.OptionShowCount(),
				progressbar.OptionSetWidth(30), progressbar.OptionThrottle(100*time.Millisecond),
				progressbar.OptionClearOnFinish())
		}
		r.bar.Set64(e.Done)
		return
	}
	if e.Done == e.Total || time.Since(r.last) > 2*time.Second {
		r.last = time.Now()
		if e.Written == 0 && e.Rejected == 0 {
			fmt.Fprintf(r.w, "%s: %d/%d %s\n", e.Stage, e.Done, e.Total, e.Unit)
		} else {
			fmt.Fprintf(r.w, "%s: %d/%d %s, %d outputs, %d rejected\n", e.Stage, e.Done, e.Total, e.Unit, e.Written, e.Rejected)
		}
	}
}

func (r *renderer) finishLocked() {
	if r.bar != nil {
		r.bar.Finish()
		r.bar = nil
	}
}

// finish closes any open bar.
func (r *renderer) finish() {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.finishLocked()
}
