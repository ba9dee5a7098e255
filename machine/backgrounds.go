package machine

import (
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"

	"thrum/machine/wavio"
)

// backgroundFiles checks the background recordings a plant names, so a bad
// one is found at load with the line of its path, not halfway through a run:
// the file exists, is a regular file (a FIFO or a device would block or never
// end), is a WAV or FLAC file thrum can read (at any rate: it is resampled
// to the working rate), and is not silence (mixing silence at a target SNR cannot work).
func (v *validator) backgroundFiles(p *Plant) {
	for i, b := range p.Backgrounds {
		if b.Path == "" {
			continue
		}
		loc, key := fmt.Sprintf("background.%d", i), fmt.Sprintf("background[%s].path", b.ID)
		if msg := checkBackground(p.Resolve(b.Path), p.SampleRate); msg != "" {
			v.bad(loc, key, "path", "%s", msg)
		}
	}
}

// checkBackground returns what is wrong with the background file at path,
// or "".
func checkBackground(path string, rate int) string {
	st, err := os.Stat(path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return fmt.Sprintf("background file %s does not exist", path)
	case err != nil:
		return fmt.Sprintf("background file %s: %v", path, err)
	case !st.Mode().IsRegular():
		return fmt.Sprintf("background file %s is not a regular file (%s)", path, st.Mode().Type())
	}
	f, err := wavio.Open(path)
	if err != nil {
		return fmt.Sprintf("background file cannot be read: %v", err)
	}
	defer f.Close()
	buf := make([]float64, 4096*f.Format().Channels)
	for {
		n, err := f.ReadFrames(buf)
		for _, x := range buf[:n*f.Format().Channels] {
			if x != 0 {
				return ""
			}
		}
		if errors.Is(err, io.EOF) || (err == nil && n == 0) {
			return fmt.Sprintf("background file %s is silent (every sample is zero)", path)
		}
		if err != nil {
			return fmt.Sprintf("background file cannot be read: %v", err)
		}
	}
}
