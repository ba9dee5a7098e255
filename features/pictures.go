// The pictures of the features stage: spectrograms and an envelope
// spectrum with its defect lines.

package features

import (
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

// pictures draws, for one machine, a recorded clip next to one of its
// augmented variants, and the envelope spectrum of a fault cue with its
// defect lines marked.
func pictures(p *machine.Plant, out, id string, st machineSetup, inputs []Input, all []fileResult, idx []int, kept map[string]bool) error {
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
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	if rec >= 0 {
		panels := []Panel{lm.Panel("recorded: "+path.Base(inputs[rec].Path), all[rec].feat, all[rec].frames)}
		if aug >= 0 {
			panels = append(panels, lm.Panel("augmented: "+path.Base(inputs[aug].Path), all[aug].feat, all[aug].frames))
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
				if err := EnvelopePNG(filepath.Join(dir, id+"-envelope-"+e.Fault.Kind+".png"), spec[:keep], binHz, lines); err != nil {
					return err
				}
				kept[path.Join(Dir, PicturesDir, id+"-envelope-"+e.Fault.Kind+".png")] = true
			}
			break
		}
	}
	return nil
}
