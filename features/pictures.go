// The pictures of the features stage: spectrograms and an envelope
// spectrum with its defect lines.

package features

import (
	"fmt"
	"math"
	"os"
	"path"
	"path/filepath"
	"strings"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// faultRank orders fault files for the envelope picture: bearing defects,
// whose lines the envelope spectrum is made to show, before other kinds.
func faultRank(p string) int {
	for i, k := range []string{"-outer-race-", "-inner-race-", "-ball-", "-cage-", "-gear-tooth-", "-impact-"} {
		if strings.Contains(path.Base(p), k) {
			return i
		}
	}
	return 9
}

// pictureTitle names a picture's clip: machine, condition and origin (with
// the fault kind or the speed change), then the file.
func pictureTitle(in Input) string {
	what := string(in.Origin)
	switch {
	case in.FaultKind != "":
		what += " " + in.FaultKind
	case in.Speed != 0 && in.Speed != 1:
		what += fmt.Sprintf(", speed ×%.3f", in.Speed)
	}
	return fmt.Sprintf("%s · %s · %s\n%s", in.Machine, in.Condition, what, path.Base(in.Path))
}

// pictures draws, for one machine, a recorded clip next to one of its
// augmented variants, and the envelope spectrum of a fault cue with its
// defect lines marked. When every clip of the machine was reused (reused)
// and the pictures are on disk, they are kept as they are.
func pictures(p *machine.Plant, out, id string, st machineSetup, inputs []Input, all []fileResult, idx []int, kept map[string]bool, reused bool) error {
	lm, err := NewLogMel(st.cfg, float64(p.SampleRate))
	if err != nil {
		return err
	}
	var rec, aug, flt = -1, -1, -1
	for _, i := range idx {
		in := inputs[i]
		switch {
		case rec < 0 && in.Origin == machine.OriginRecorded && in.Split == machine.SplitTrain && in.Label == machine.LabelNormal:
			rec = i
		}
	}
	if rec >= 0 {
		for _, i := range idx {
			in := inputs[i]
			if aug < 0 && in.Origin == machine.OriginAugmented && in.Source == inputs[rec].Source && in.Clip == inputs[rec].Clip {
				aug = i
			}
			if in.Origin == machine.OriginSyntheticFault && (flt < 0 || faultRank(in.Path) < faultRank(inputs[flt].Path)) {
				flt = i
			}
		}
	}
	dir := filepath.Join(out, Dir, PicturesDir)
	if reused {
		var want []string
		if rec >= 0 {
			want = append(want, id+"-spectrogram.png")
		}
		if flt >= 0 {
			want = append(want, id+"-envelope-"+inputs[flt].FaultKind+".png")
		}
		ok := true
		for _, f := range want {
			if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
				ok = false
			}
		}
		if ok {
			for _, f := range want {
				kept[path.Join(Dir, PicturesDir, f)] = true
			}
			return nil
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	if rec >= 0 {
		panels := []Panel{lm.Panel(pictureTitle(inputs[rec]), all[rec].feat, all[rec].frames)}
		if aug >= 0 {
			panels = append(panels, lm.Panel(pictureTitle(inputs[aug]), all[aug].feat, all[aug].frames))
		}
		if err := SpectrogramPNG(filepath.Join(dir, id+"-spectrogram.png"), panels); err != nil {
			return err
		}
		kept[path.Join(Dir, PicturesDir, id+"-spectrogram.png")] = true
	}
	if flt >= 0 {
		ents, err := ledger.ReadFile(ledger.Path(out, id))
		if err != nil {
			return err
		}
		for _, e := range ents {
			if e.Path != inputs[flt].Path || e.Fault == nil {
				continue
			}
			a, err := wavio.ReadFile(filepath.Join(out, filepath.FromSlash(e.Path)))
			if err != nil {
				return err
			}
			x := a.Mono(nil)
			lo, hi := st.envLo, st.envHi
			if e.Fault.ResonanceHz > 0 {
				lo, hi = 0.7*e.Fault.ResonanceHz, math.Min(1.3*e.Fault.ResonanceHz, 0.49*float64(a.Format.SampleRate))
			}
			spec, binHz := EnvelopeSpectrum(nil, x, float64(a.Format.SampleRate), lo, hi)
			lines := map[string]float64{}
			for k, v := range e.Fault.Frequencies {
				if k != "defect" && v > 0 && v < st.envMax {
					lines[k] = v
				}
			}
			keep := int(st.envMax/binHz) + 1
			if keep > len(spec) {
				keep = len(spec)
			}
			if len(lines) > 0 {
				if err := EnvelopePNG(filepath.Join(dir, id+"-envelope-"+e.Fault.Kind+".png"), pictureTitle(inputs[flt])+" · envelope spectrum", spec[:keep], binHz, lines); err != nil {
					return err
				}
				kept[path.Join(Dir, PicturesDir, id+"-envelope-"+e.Fault.Kind+".png")] = true
			}
			break
		}
	}
	return nil
}
