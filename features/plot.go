package features

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"thrum/machine"
)

// DynamicRangeDB is the colour range of SpectrogramPNG below the loudest
// cell of all panels.
const DynamicRangeDB = 80

// Panel is one spectrogram picture: a row-major Frames × Rows array in dB.
type Panel struct {
	Title        string
	Data         []float32
	Frames, Rows int
	// FrameSeconds is the time step between frames (the hop in s).
	FrameSeconds float64
	// Scale says where the rows sit. "" (linear): row r at
	// FMin + r·(FMax − FMin)/(Rows − 1), as STFT bins 0..NFFT/2 from 0 to
	// fs/2. ScaleHTK or ScaleSlaney: mel band centres for Rows bands between
	// FMin and FMax, as built by NewFilterbank; the axis is then mel-spaced
	// with ticks labelled in Hz.
	Scale      string
	FMin, FMax float64
}

// Panel returns a picture panel for features computed by l (in dB).
func (l *LogMel) Panel(title string, data []float32, frames int) Panel {
	return Panel{
		Title: title, Data: data, Frames: frames, Rows: l.cfg.Bands,
		FrameSeconds: l.FrameSeconds(), Scale: l.cfg.Scale,
		FMin: l.cfg.FMin, FMax: l.cfg.FMax,
	}
}

// panelGrid adapts a Panel to plotter.GridXYZ; y is in Hz (linear) or mel.
type panelGrid struct {
	p        Panel
	y0, step float64
}

func (g panelGrid) Dims() (c, r int)   { return g.p.Frames, g.p.Rows }
func (g panelGrid) Z(c, r int) float64 { return float64(g.p.Data[c*g.p.Rows+r]) }
func (g panelGrid) X(c int) float64    { return float64(c) * g.p.FrameSeconds }
func (g panelGrid) Y(r int) float64    { return g.y0 + float64(r)*g.step }

// hzTicks labels a mel-spaced axis with round frequencies in Hz.
type hzTicks struct{ toMel, toHz func(float64) float64 }

func (t hzTicks) Ticks(lo, hi float64) []plot.Tick {
	var ticks []plot.Tick
	for _, f := range []float64{0, 100, 200, 500, 1000, 2000, 4000, 8000, 16000, 24000, 48000} {
		m := t.toMel(f)
		if m < lo || m > hi {
			continue
		}
		ticks = append(ticks, plot.Tick{Value: m, Label: strconv.FormatFloat(f, 'f', -1, 64)})
	}
	return ticks
}

func (p Panel) check() error {
	switch {
	case p.Frames < 1 || p.Rows < 1 || len(p.Data) != p.Frames*p.Rows:
		return fmt.Errorf("features: panel %q: %d values for %d frames × %d rows", p.Title, len(p.Data), p.Frames, p.Rows)
	case !(p.FrameSeconds > 0):
		return fmt.Errorf("features: panel %q: frame step %v s", p.Title, p.FrameSeconds)
	case !(p.FMax > p.FMin) || p.FMin < 0:
		return fmt.Errorf("features: panel %q: frequency range %v..%v Hz", p.Title, p.FMin, p.FMax)
	}
	if p.Scale != "" {
		if _, _, err := MelFuncs(p.Scale); err != nil {
			return err
		}
	}
	return nil
}

// SpectrogramPNG draws the panels side by side with one shared colour bar in
// dB (from the loudest cell down by DynamicRangeDB) and writes a PNG to path
// atomically. Time is in s, frequency in Hz.
func SpectrogramPNG(path string, panels []Panel) error {
	if len(panels) == 0 {
		return fmt.Errorf("features: spectrogram: no panels")
	}
	top := math.Inf(-1)
	for _, p := range panels {
		if err := p.check(); err != nil {
			return err
		}
		for _, v := range p.Data {
			if !math.IsInf(float64(v), 0) && float64(v) > top {
				top = float64(v)
			}
		}
	}
	if math.IsInf(top, -1) {
		return fmt.Errorf("features: spectrogram: no finite values")
	}
	cmap := moreland.ExtendedBlackBody()
	cmap.SetMax(top)
	cmap.SetMin(top - DynamicRangeDB)
	pal := cmap.Palette(256)

	const panelW, barW, height = 5 * vg.Inch, 1.1 * vg.Inch, 3.6 * vg.Inch
	width := panelW*vg.Length(len(panels)) + barW
	img := vgimg.New(width, height)
	dc := draw.New(img)
	for i, p := range panels {
		plt := plot.New()
		plt.Title.Text = p.Title
		plt.X.Label.Text = "time (s)"
		plt.Y.Label.Text = "frequency (Hz)"
		g := panelGrid{p: p}
		if p.Scale == "" {
			g.y0 = p.FMin
			if p.Rows > 1 {
				g.step = (p.FMax - p.FMin) / float64(p.Rows-1)
			}
		} else {
			toMel, toHz, _ := MelFuncs(p.Scale)
			mlo, mhi := toMel(p.FMin), toMel(p.FMax)
			g.step = (mhi - mlo) / float64(p.Rows+1)
			g.y0 = mlo + g.step
			plt.Y.Tick.Marker = hzTicks{toMel, toHz}
		}
		hm := plotter.NewHeatMap(g, pal)
		hm.Rasterized = true
		hm.Min, hm.Max = top-DynamicRangeDB, top
		hm.Underflow = pal.Colors()[0]
		hm.Overflow = pal.Colors()[len(pal.Colors())-1]
		plt.Add(hm)
		c := draw.Crop(dc, panelW*vg.Length(i), -(width - panelW*vg.Length(i+1)), 0, 0)
		plt.Draw(c)
	}
	bar := plot.New()
	bar.Title.Text = "dB"
	bar.HideX()
	bar.Add(&plotter.ColorBar{ColorMap: cmap, Vertical: true})
	bar.Draw(draw.Crop(dc, width-barW+0.2*vg.Inch, -0.2*vg.Inch, 0, 0))
	return savePNG(path, img)
}

func savePNG(path string, img *vgimg.Canvas) error {
	var buf bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: img}).WriteTo(&buf); err != nil {
		return fmt.Errorf("features: png: %w", err)
	}
	return machine.WriteFileAtomic(path, buf.Bytes())
}

// EnvelopePNG plots an envelope spectrum (bin k at k·binHz) and marks each
// named defect line (BPFO, BPFI, ...) with a dashed vertical line, then
// writes a PNG to path atomically. The axis spans 0 to the smaller of the
// full range and 4× the highest line, so a few harmonics show.
func EnvelopePNG(path string, spec []float64, binHz float64, lines map[string]float64) error {
	if len(spec) < 2 || !(binHz > 0) {
		return fmt.Errorf("features: envelope plot: %d bins of %v Hz", len(spec), binHz)
	}
	xmax := float64(len(spec)-1) * binHz
	names := make([]string, 0, len(lines))
	hi := 0.0
	for n, f := range lines {
		if !(f > 0) || math.IsInf(f, 0) {
			return fmt.Errorf("features: envelope plot: line %s at %v Hz", n, f)
		}
		names = append(names, n)
		hi = math.Max(hi, f)
	}
	sort.Strings(names)
	if hi > 0 {
		xmax = math.Min(xmax, 4*hi)
	}
	kmax := min(len(spec)-1, int(math.Ceil(xmax/binHz)))
	// At most maxPoints points: each keeps the largest bin of its run, so no
	// line is lost, and the rasteriser does not draw thousands of segments
	// per pixel column.
	const maxPoints = 1600
	step := (kmax + maxPoints) / maxPoints
	pts := make(plotter.XYs, 0, kmax/step+1)
	ymax := 0.0
	for k0 := 0; k0 <= kmax; k0 += step {
		best := k0
		for k := k0; k < k0+step && k <= kmax; k++ {
			if spec[k] > spec[best] {
				best = k
			}
		}
		pts = append(pts, plotter.XY{X: float64(best) * binHz, Y: spec[best]})
		if best > 0 {
			ymax = math.Max(ymax, spec[best])
		}
	}
	if ymax == 0 {
		ymax = 1
	}
	plt := plot.New()
	plt.Title.Text = "envelope spectrum"
	plt.X.Label.Text = "frequency (Hz)"
	plt.Y.Label.Text = "amplitude"
	plt.X.Min, plt.X.Max = 0, xmax
	plt.Y.Min, plt.Y.Max = 0, 1.1*ymax
	ln, err := plotter.NewLine(pts)
	if err != nil {
		return fmt.Errorf("features: envelope plot: %w", err)
	}
	ln.Color = color.Black
	plt.Add(ln)
	for i, n := range names {
		f := lines[n]
		if f > xmax {
			continue
		}
		v, err := plotter.NewLine(plotter.XYs{{X: f, Y: 0}, {X: f, Y: 1.1 * ymax}})
		if err != nil {
			return fmt.Errorf("features: envelope plot: %w", err)
		}
		v.Color = plotutil.Color(i)
		v.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		plt.Add(v)
		plt.Legend.Add(fmt.Sprintf("%s %.2f Hz", n, f), v)
	}
	plt.Legend.Top = true
	img := vgimg.New(8*vg.Inch, 4*vg.Inch)
	plt.Draw(draw.New(img))
	return savePNG(path, img)
}
