package ledger

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"time"
)

// LockName is the lock file of an unsharded run in the output root;
// LockName-<i>-of-<n> is the lock of shard i of n.
const LockName = ".thrum.lock"

// LockFileName is the lock file of a run: LockName for an unsharded run,
// LockName-<i>-of-<n> for shard i of n.
func LockFileName(s Shard) string {
	if s.sharded() {
		return fmt.Sprintf("%s-%d-of-%d", LockName, s.I, s.N)
	}
	return LockName
}

var shardLockRE = regexp.MustCompile(`^` + regexp.QuoteMeta(LockName) + `-(\d+)-of-(\d+)$`)

// Holder describes the process that holds (or held) a lock: what the lock
// file says.
type Holder struct {
	PID     int
	Host    string
	Since   time.Time
	Command string
	// File is the lock file.
	File string
}

func (h Holder) String() string {
	since := "an unknown time"
	if !h.Since.IsZero() {
		since = h.Since.Format(time.RFC3339)
	}
	s := fmt.Sprintf("pid %d on host %s since %s", h.PID, h.Host, since)
	if h.Command != "" {
		s += " (" + h.Command + ")"
	}
	return s
}

// LockedError says the output root is in use by another live run.
type LockedError struct {
	Out    string
	Holder Holder
}

func (e *LockedError) Error() string {
	return fmt.Sprintf("ledger: output root %s is in use by %s (lock %s); wait for it to finish, or pass --wait-lock to wait",
		e.Out, e.Holder, e.Holder.File)
}

// Lock is a held lock on an output root (see LockOut).
type Lock struct {
	f    *os.File
	path string
	// TookOver lists the stale locks this one replaced: lock files whose
	// holder died without releasing them.
	TookOver []Holder
}

// LockOptions configure LockOut.
type LockOptions struct {
	// Shard is the share of the run; shards of one run hold their own locks
	// and coexist.
	Shard Shard
	// Command is recorded in the lock file for the message a refused run
	// prints.
	Command string
	// Wait makes LockOut wait (polling, until ctx ends) instead of refusing.
	Wait bool
	// Poll is the interval between attempts when waiting (0 = 250 ms).
	Poll time.Duration
}

// LockOut takes the lock of a run on the output root out (creating out if
// needed): the file LockFileName(opt.Shard), locked with flock(2) and holding
// the holder's pid, host name, start time and command. An unsharded run also
// checks that no shard lock is live, a sharded run that no unsharded lock is
// live: shards of one run coexist, a run and its join do not. A live
// holder makes LockOut return a *LockedError naming it (or wait, with
// opt.Wait). A lock whose holder died (the kernel released its flock) is
// stale: it is taken over and listed in Lock.TookOver. Release removes the
// file; a killed holder's file stays and is taken over by the next run.
func LockOut(ctx context.Context, out string, opt LockOptions) (*Lock, error) {
	if err := os.MkdirAll(out, 0o755); err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	poll := opt.Poll
	if poll <= 0 {
		poll = 250 * time.Millisecond
	}
	for {
		l, err := tryLockOut(out, opt)
		var le *LockedError
		if err == nil || !errors.As(err, &le) || !opt.Wait {
			return l, err
		}
		select {
		case <-ctx.Done():
			return nil, ctx.Err()
		case <-time.After(poll):
		}
	}
}

func tryLockOut(out string, opt LockOptions) (*Lock, error) {
	l, err := acquire(filepath.Join(out, LockFileName(opt.Shard)), out)
	if err != nil {
		return nil, err
	}
	// the other kind of lock: shard locks for an unsharded run, the
	// unsharded lock for a shard
	var others []string
	if opt.Shard.sharded() {
		others = []string{filepath.Join(out, LockName)}
	} else {
		ents, err := os.ReadDir(out)
		if err != nil {
			l.Release()
			return nil, fmt.Errorf("ledger: %w", err)
		}
		for _, e := range ents {
			if shardLockRE.MatchString(e.Name()) {
				others = append(others, filepath.Join(out, e.Name()))
			}
		}
	}
	for _, o := range others {
		live, h, err := probe(o)
		if err != nil {
			l.Release()
			return nil, err
		}
		if live {
			l.Release()
			return nil, &LockedError{Out: out, Holder: h}
		}
	}
	host, _ := os.Hostname()
	content := fmt.Sprintf("pid %d\nhost %s\nsince %s\ncommand %s\n", os.Getpid(), host,
		time.Now().UTC().Format(time.RFC3339), strings.ReplaceAll(opt.Command, "\n", " "))
	if err := l.f.Truncate(0); err == nil {
		_, err = l.f.WriteAt([]byte(content), 0)
	}
	if err != nil {
		l.Release()
		return nil, fmt.Errorf("ledger: write lock %s: %w", l.path, err)
	}
	return l, nil
}

// acquire opens and flocks path. A file left by a holder that died is taken
// over (its holder goes to TookOver).
func acquire(path, out string) (*Lock, error) {
	for attempt := 0; ; attempt++ {
		f, err := os.OpenFile(path, os.O_CREATE|os.O_RDWR, 0o644)
		if err != nil {
			return nil, fmt.Errorf("ledger: lock %s: %w", path, err)
		}
		ok, err := flockTry(f)
		if err != nil {
			f.Close()
			return nil, fmt.Errorf("ledger: lock %s: %w", path, err)
		}
		if !ok {
			h := readHolder(f, path)
			f.Close()
			return nil, &LockedError{Out: out, Holder: h}
		}
		// The holder may have released (and removed) the file between our
		// open and our flock: then we hold a lock on a file no one else
		// sees. Start again on the file the path names now.
		if !samePath(f, path) {
			f.Close()
			if attempt > 100 {
				return nil, fmt.Errorf("ledger: lock %s: the file keeps changing", path)
			}
			continue
		}
		l := &Lock{f: f, path: path}
		if h := readHolder(f, path); h.PID != 0 || h.Host != "" {
			l.TookOver = append(l.TookOver, h)
		}
		return l, nil
	}
}

// probe reports whether the lock file at path is held by a live process.
// A file no one holds is stale: it is removed (so a later check does not
// find it again) and not reported as live.
func probe(path string) (bool, Holder, error) {
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if errors.Is(err, fs.ErrNotExist) {
		return false, Holder{}, nil
	}
	if err != nil {
		return false, Holder{}, fmt.Errorf("ledger: lock %s: %w", path, err)
	}
	defer f.Close()
	ok, err := flockTry(f)
	if err != nil {
		return false, Holder{}, fmt.Errorf("ledger: lock %s: %w", path, err)
	}
	h := readHolder(f, path)
	if !ok {
		return true, h, nil
	}
	if samePath(f, path) {
		os.Remove(path)
	}
	flockRelease(f)
	return false, h, nil
}

func samePath(f *os.File, path string) bool {
	a, err1 := f.Stat()
	b, err2 := os.Stat(path)
	return err1 == nil && err2 == nil && os.SameFile(a, b)
}

func readHolder(f *os.File, path string) Holder {
	h := Holder{File: path}
	b := make([]byte, 4096)
	n, _ := f.ReadAt(b, 0)
	sc := bufio.NewScanner(strings.NewReader(string(b[:n])))
	for sc.Scan() {
		k, v, _ := strings.Cut(sc.Text(), " ")
		switch k {
		case "pid":
			h.PID, _ = strconv.Atoi(v)
		case "host":
			h.Host = v
		case "since":
			h.Since, _ = time.Parse(time.RFC3339, v)
		case "command":
			h.Command = v
		}
	}
	return h
}

// Release removes the lock file and releases the lock. It is safe to call
// more than once.
func (l *Lock) Release() error {
	if l == nil || l.f == nil {
		return nil
	}
	var err error
	if samePath(l.f, l.path) {
		if e := os.Remove(l.path); e != nil && !errors.Is(e, fs.ErrNotExist) {
			err = fmt.Errorf("ledger: %w", e)
		}
	}
	flockRelease(l.f)
	l.f.Close()
	l.f = nil
	return err
}
