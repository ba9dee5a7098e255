package ledger

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"testing"
	"time"
)

func TestLockOut(t *testing.T) {
	out := t.TempDir()
	ctx := context.Background()
	host, _ := os.Hostname()
	cases := []struct {
		name    string
		held    Shard
		want    Shard
		refused bool
	}{
		{"unsharded twice", Shard{}, Shard{}, true},
		{"same shard twice", Shard{1, 4}, Shard{1, 4}, true},
		{"two shards of one run", Shard{1, 4}, Shard{2, 4}, false},
		{"join while a shard runs", Shard{1, 4}, Shard{}, true},
		{"shard while the join runs", Shard{}, Shard{3, 4}, true},
	}
	for _, c := range cases {
		a, err := LockOut(ctx, out, LockOptions{Shard: c.held, Command: "thrum first"})
		if err != nil {
			t.Fatalf("%s: first lock: %v", c.name, err)
		}
		b, err := LockOut(ctx, out, LockOptions{Shard: c.want, Command: "thrum second"})
		var le *LockedError
		switch {
		case c.refused && !errors.As(err, &le):
			t.Errorf("%s: second lock: %v, want a *LockedError", c.name, err)
		case c.refused && (le.Holder.PID != os.Getpid() || le.Holder.Host != host || le.Holder.Command != "thrum first" || le.Holder.Since.IsZero()):
			t.Errorf("%s: holder %+v, want pid %d on %s", c.name, le.Holder, os.Getpid(), host)
		case !c.refused && err != nil:
			t.Errorf("%s: second lock refused: %v", c.name, err)
		}
		b.Release()
		if err := a.Release(); err != nil {
			t.Error(err)
		}
		if left, _ := filepath.Glob(filepath.Join(out, LockName+"*")); len(left) != 0 {
			t.Errorf("%s: lock files left after release: %v", c.name, left)
		}
	}
}

// A lock file nobody holds (its holder was killed: the kernel dropped the
// flock, the file stayed) is taken over and reported.
func TestLockOutTakesOverStaleLock(t *testing.T) {
	out := t.TempDir()
	for _, name := range []string{LockName, LockName + "-0-of-2"} {
		os.WriteFile(filepath.Join(out, name), []byte("pid 999999999\nhost elsewhere\nsince 2001-02-03T04:05:06Z\ncommand thrum run\n"), 0o644)
	}
	l, err := LockOut(context.Background(), out, LockOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer l.Release()
	if len(l.TookOver) != 1 || l.TookOver[0].PID != 999999999 || l.TookOver[0].Host != "elsewhere" {
		t.Errorf("took over %+v, want the dead holder", l.TookOver)
	}
	if _, err := os.Stat(filepath.Join(out, LockName+"-0-of-2")); err == nil {
		t.Error("the stale shard lock is still there")
	}
}

func TestLockOutWait(t *testing.T) {
	out := t.TempDir()
	a, err := LockOut(context.Background(), out, LockOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// waiting ends with the context
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := LockOut(ctx, out, LockOptions{Wait: true, Poll: time.Millisecond}); !errors.Is(err, context.Canceled) {
		t.Errorf("wait with a cancelled context: %v", err)
	}
	// and succeeds once the holder releases
	got := make(chan error, 1)
	go func() {
		b, err := LockOut(context.Background(), out, LockOptions{Wait: true, Poll: time.Millisecond})
		if err == nil {
			err = b.Release()
		}
		got <- err
	}()
	a.Release()
	if err := <-got; err != nil {
		t.Errorf("waiting lock: %v", err)
	}
}
