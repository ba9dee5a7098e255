package machine

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"strconv"
	"strings"
)

// StaleDir is the folder, directly under an output root, that receives
// files thrum wrote earlier and no ledger line, index or list references any
// more (outputs of a deleted recording, of a lowered variant count, of a
// clip dropped by the remainder policy). They keep their path relative to
// the output root: OUT/a/b.wav moves to OUT/.stale/a/b.wav. thrum never
// deletes them and never reads them again.
const StaleDir = ".stale"

// MoveStale moves the file at rel (relative to the output root out,
// slash-separated) to out/StaleDir/rel and returns where it went, relative
// to out. When that name is taken by an earlier stale file, the new one gets
// a number before its extension (b.1.wav, b.2.wav, …): nothing is
// overwritten.
func MoveStale(out, rel string) (string, error) {
	rel = path.Clean(filepath.ToSlash(rel))
	if rel == "." || strings.HasPrefix(rel, "../") || path.IsAbs(rel) || strings.HasPrefix(rel, StaleDir+"/") {
		return "", fmt.Errorf("machine: move to %s: %q is not a path inside the output root", StaleDir, rel)
	}
	src := filepath.Join(out, filepath.FromSlash(rel))
	dstRel := path.Join(StaleDir, rel)
	ext := path.Ext(dstRel)
	for n := 1; ; n++ {
		_, err := os.Lstat(filepath.Join(out, filepath.FromSlash(dstRel)))
		if errors.Is(err, fs.ErrNotExist) {
			break
		}
		if err != nil {
			return "", fmt.Errorf("machine: %w", err)
		}
		dstRel = strings.TrimSuffix(path.Join(StaleDir, rel), ext) + "." + strconv.Itoa(n) + ext
	}
	dst := filepath.Join(out, filepath.FromSlash(dstRel))
	if err := os.MkdirAll(filepath.Dir(dst), 0o755); err != nil {
		return "", fmt.Errorf("machine: %w", err)
	}
	if err := os.Rename(src, dst); err != nil {
		return "", fmt.Errorf("machine: move %s to %s: %w", rel, dstRel, err)
	}
	return dstRel, nil
}
