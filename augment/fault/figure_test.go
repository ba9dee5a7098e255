package fault

import (
	"flag"
	"fmt"
	"image/color"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"thrum/features"
)

var figure = flag.String("fault.figure", "", "write a PNG of an outer-race cue's envelope spectrum to this path")

// TestFigure draws the envelope spectrum of an outer-race cue on the CWRU
// 6205 at 1797 rpm, with BPFO and its harmonics marked. It runs only with
// -fault.figure=PATH.
func TestFigure(t *testing.T) {
	if *figure == "" {
		t.Skip("no -fault.figure path")
	}
	r := cwru6205.Rates(cwruShaftHz)
	b := Bearing{Kind: KindOuterRace, ShaftHz: cwruShaftHz, DefectHz: r.BPFO,
		JitterFrac: DefaultJitterFrac, SeverityDB: -10}
	const fs, n = 16000.0, 160000
	clip := noiseClip(n, testRMS, 1)
	y, lab, err := Add(nil, clip, fs, b, rand.New(rand.NewPCG(1, 2)))
	if err != nil {
		t.Fatal(err)
	}
	spec, bin := features.EnvelopeSpectrum(nil, y, fs, 2000, 4000)
	const top = 500.0
	pts := make(plotter.XYs, 0, int(top/bin))
	var peak float64
	for k := 1; float64(k)*bin <= top; k++ {
		pts = append(pts, plotter.XY{X: float64(k) * bin, Y: spec[k]})
		peak = max(peak, spec[k])
	}
	p := plot.New()
	p.Title.Text = fmt.Sprintf("Envelope spectrum, outer-race cue (6205 at 1797 rpm, BPFO %.2f Hz, %g dB re clip, jitter %.1f %%)",
		lab.Frequencies["bpfo"], lab.SeverityDB, 100*b.JitterFrac)
	p.Title.TextStyle.Font.Size = vg.Points(10)
	p.X.Label.Text = "frequency (Hz)"
	p.Y.Label.Text = "envelope amplitude (2–4 kHz band)"
	p.X.Min, p.X.Max = 0, top
	p.Y.Min, p.Y.Max = 0, 1.1*peak
	line, err := plotter.NewLine(pts)
	if err != nil {
		t.Fatal(err)
	}
	line.Color = color.RGBA{B: 160, A: 255}
	for h := 1; float64(h)*r.BPFO < top; h++ {
		f := float64(h) * r.BPFO
		m, err := plotter.NewLine(plotter.XYs{{X: f, Y: 0}, {X: f, Y: 1.1 * peak}})
		if err != nil {
			t.Fatal(err)
		}
		m.Color = color.RGBA{R: 200, A: 255}
		m.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		p.Add(m)
		if h == 1 {
			p.Legend.Add("BPFO harmonics", m)
		}
	}
	p.Add(line) // on top of the markers
	p.Legend.Add("envelope spectrum", line)
	p.Legend.Top = true
	if err := p.Save(9*vg.Inch, 4.5*vg.Inch, *figure); err != nil {
		t.Fatal(err)
	}
}
