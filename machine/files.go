package machine

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
)

// ErrNotRegular is wrapped by CheckRegular's error.
var ErrNotRegular = errors.New("not a regular file")

// CheckRegular returns an error wrapping ErrNotRegular, naming the kind of
// file, when path (after symbolic links) is not a regular file: a named
// pipe, socket or device. Such a file must never be opened as audio:
// opening a named pipe blocks until a writer appears, which may be never.
func CheckRegular(path string) error {
	st, err := os.Stat(path)
	if err != nil {
		return err
	}
	if st.Mode().IsRegular() {
		return nil
	}
	kind := "special file"
	switch m := st.Mode(); {
	case m&fs.ModeNamedPipe != 0:
		kind = "named pipe"
	case m&fs.ModeSocket != 0:
		kind = "socket"
	case m&fs.ModeDevice != 0:
		kind = "device"
	case m.IsDir():
		kind = "folder"
	}
	return fmt.Errorf("%w (%s)", ErrNotRegular, kind)
}

// ContextReader returns a reader that reads from r until ctx is done, then
// fails with ctx's error, so a long read (hashing a large file, a large
// ledger) stops within one read call of a cancellation.
func ContextReader(ctx context.Context, r io.Reader) io.Reader {
	return &ctxReader{ctx, r}
}

type ctxReader struct {
	ctx context.Context
	r   io.Reader
}

func (c *ctxReader) Read(p []byte) (int, error) {
	if err := c.ctx.Err(); err != nil {
		return 0, err
	}
	return c.r.Read(p)
}

// HashFileContext is HashFile that stops with ctx's error when ctx is done.
func HashFileContext(ctx context.Context, path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	return hashReader(ContextReader(ctx, f))
}
