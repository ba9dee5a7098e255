package features

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
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

// bandTicks labels a mel-spaced axis at band centres: a labelled tick at
// every step-th band's centre frequency (in Hz or kHz), and an unlabelled
// one at each band between.
type bandTicks struct {
	g    panelGrid
	toHz func(float64) float64
}

func (t bandTicks) Ticks(lo, hi float64) []plot.Tick {
	rows := t.g.p.Rows
	step := max(1, rows/8)
	var ticks []plot.Tick
	for r := 0; r < rows; r++ {
		y := t.g.Y(r)
		if y < lo || y > hi {
			continue
		}
		tk := plot.Tick{Value: y}
		if r%step == 0 || r == rows-1 && step > 1 && (rows-1)%step >= step/2 {
			tk.Label = hzLabel(t.toHz(y))
		}
		ticks = append(ticks, tk)
	}
	return ticks
}

// hzTicks labels a linear frequency axis in Hz or kHz.
type hzTicks struct{}

func (hzTicks) Ticks(lo, hi float64) []plot.Tick {
	ticks := plot.DefaultTicks{}.Ticks(lo, hi)
	for i := range ticks {
		if ticks[i].Label != "" {
			ticks[i].Label = hzLabel(ticks[i].Value)
		}
	}
	return ticks
}

// hzLabel writes a frequency with three significant digits, in kHz from
// 1 kHz up: "62.5 Hz", "1.25 kHz".
func hzLabel(f float64) string {
	if math.Abs(f) >= 1000 {
		return strconv.FormatFloat(roundSig(f/1000, 3), 'f', -1, 64) + " kHz"
	}
	return strconv.FormatFloat(roundSig(f, 3), 'f', -1, 64) + " Hz"
}

func roundSig(x float64, n int) float64 {
	if x == 0 {
		return 0
	}
	p := math.Pow(10, float64(n)-math.Ceil(math.Log10(math.Abs(x))))
	return math.Round(x*p) / p
}

// Ramp is thrum's colour scheme for spectrograms: a ramp from night blue
// through steel blue and bronze to amber and a warm white, interpolated
// linearly in sRGB between its stops. It implements palette.ColorMap.
type Ramp struct {
	min, max, alpha float64
}

// rampStops are the colours of Ramp at 0, 0.3, 0.58, 0.8 and 1.
var rampStops = []struct {
	at      float64
	r, g, b float64
}{
	{0, 8, 16, 40},
	{0.3, 30, 66, 128},
	{0.58, 168, 106, 44},
	{0.8, 246, 178, 38},
	{1, 255, 249, 232},
}

// NewRamp returns the ramp over [min, max].
func NewRamp(min, max float64) *Ramp { return &Ramp{min: min, max: max, alpha: 1} }

// At returns the colour of v, an error outside [Min, Max].
func (m *Ramp) At(v float64) (color.Color, error) {
	if !(v >= m.min && v <= m.max) || !(m.max > m.min) {
		return color.Black, fmt.Errorf("features: colour of %v outside %v..%v", v, m.min, m.max)
	}
	return m.at((v - m.min) / (m.max - m.min)), nil
}

func (m *Ramp) at(u float64) color.Color {
	i := 1
	for i < len(rampStops)-1 && u > rampStops[i].at {
		i++
	}
	a, b := rampStops[i-1], rampStops[i]
	w := (u - a.at) / (b.at - a.at)
	c := func(x, y float64) uint8 { return uint8(math.Round(m.alpha * (x + w*(y-x)))) }
	return color.NRGBA{R: c(a.r, b.r), G: c(a.g, b.g), B: c(a.b, b.b), A: uint8(math.Round(255 * m.alpha))}
}

func (m *Ramp) Max() float64       { return m.max }
func (m *Ramp) SetMax(v float64)   { m.max = v }
func (m *Ramp) Min() float64       { return m.min }
func (m *Ramp) SetMin(v float64)   { m.min = v }
func (m *Ramp) Alpha() float64     { return m.alpha }
func (m *Ramp) SetAlpha(a float64) { m.alpha = math.Min(1, math.Max(0, a)) }
func (m *Ramp) Palette(n int) palette.Palette {
	cs := make([]color.Color, n)
	for i := range cs {
		u := 0.0
		if n > 1 {
			u = float64(i) / float64(n-1)
		}
		cs[i] = m.at(u)
	}
	return rampPalette(cs)
}

type rampPalette []color.Color

func (p rampPalette) Colors() []color.Color { return p }

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
	cmap := NewRamp(top-DynamicRangeDB, top)
	pal := cmap.Palette(256)

	const panelW, barW, height = 5 * vg.Inch, 1.1 * vg.Inch, 3.6 * vg.Inch
	width := panelW*vg.Length(len(panels)) + barW
	img := vgimg.New(width, height)
	dc := draw.New(img)
	for i, p := range panels {
		plt := plot.New()
		plt.Title.Text = p.Title
		plt.X.Label.Text = "time (s)"
		plt.Y.Label.Text = "frequency"
		g := panelGrid{p: p}
		if p.Scale == "" {
			g.y0 = p.FMin
			if p.Rows > 1 {
				g.step = (p.FMax - p.FMin) / float64(p.Rows-1)
			}
			plt.Y.Tick.Marker = hzTicks{}
		} else {
			toMel, toHz, _ := MelFuncs(p.Scale)
			mlo, mhi := toMel(p.FMin), toMel(p.FMax)
			g.step = (mhi - mlo) / float64(p.Rows+1)
			g.y0 = mlo + g.step
			plt.Y.Tick.Marker = bandTicks{g, toHz}
			plt.Y.Label.Text = "mel band centre"
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
	bar.Title.Text = "dB re full-\nscale bin"
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
	return writeIfChanged(path, buf.Bytes())
}

// EnvelopePNG plots an envelope spectrum (bin k at k·binHz, amplitude in
// full-scale units: a sinusoid of amplitude a in the envelope reads a) under
// title, marks each named defect line (BPFO, BPFI, ...) with a dashed
// vertical line and the harmonics of the highest with markers above it, then writes a
// PNG to path atomically. The axis spans 0 to the smaller of the full range
// and 4.5× the highest line, so four harmonics of it show, none on the edge;
// every line and marker drawn lies inside the plotted range, and a line
// beyond it is named in the legend as such.
func EnvelopePNG(path, title string, spec []float64, binHz float64, lines map[string]float64) error {
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
		xmax = math.Min(xmax, 4.5*hi)
	}
	kmax := min(len(spec)-1, int(math.Floor(xmax/binHz)))
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
	plt.Title.Text = title
	plt.X.Label.Text = "envelope frequency"
	plt.X.Tick.Marker = hzTicks{}
	plt.Y.Label.Text = "envelope amplitude (full scale = 1)"
	plt.X.Min, plt.X.Max = 0, xmax
	plt.Y.Min, plt.Y.Max = 0, 1.45*ymax // the top for the legend
	ln, err := plotter.NewLine(pts)
	if err != nil {
		return fmt.Errorf("features: envelope plot: %w", err)
	}
	ln.Color = color.NRGBA{R: 20, G: 34, B: 70, A: 255}
	plt.Add(ln)
	for i, n := range names {
		f := lines[n]
		c := lineColours[i%len(lineColours)]
		if f > xmax {
			// no line outside the plotted range: the legend says where it is
			v, _ := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}})
			v.Color = c
			plt.Legend.Add(fmt.Sprintf("%s %s (beyond the range)", n, hzLabel(f)), v)
			continue
		}
		v, err := plotter.NewLine(plotter.XYs{{X: f, Y: 0}, {X: f, Y: 1.05 * ymax}})
		if err != nil {
			return fmt.Errorf("features: envelope plot: %w", err)
		}
		v.Color = c
		v.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
		plt.Add(v)
		var harm plotter.XYs
		for k := 2; f == hi && float64(k)*f <= xmax; k++ {
			harm = append(harm, plotter.XY{X: float64(k) * f, Y: 1.08 * ymax})
		}
		label := fmt.Sprintf("%s %s", n, hzLabel(f))
		if len(harm) > 0 {
			sc, err := plotter.NewScatter(harm)
			if err != nil {
				return fmt.Errorf("features: envelope plot: %w", err)
			}
			sc.Color = c
			sc.Shape = draw.PyramidGlyph{}
			sc.Radius = vg.Points(3)
			plt.Add(sc)
			label += fmt.Sprintf(" (▲ harmonics 2×–%d×)", len(harm)+1)
			plt.Legend.Add(label, v, sc)
		} else {
			plt.Legend.Add(label, v)
		}
	}
	plt.Legend.Top = true
	img := vgimg.New(8*vg.Inch, 4*vg.Inch)
	plt.Draw(draw.New(img))
	return savePNG(path, img)
}

// lineColours mark defect lines: colours of the ramp's warm end and two
// that stand apart from it and from the dark trace.
var lineColours = []color.Color{
	color.NRGBA{R: 214, G: 120, B: 20, A: 255},
	color.NRGBA{R: 40, G: 140, B: 150, A: 255},
	color.NRGBA{R: 170, G: 50, B: 90, A: 255},
	color.NRGBA{R: 110, G: 110, B: 30, A: 255},
	color.NRGBA{R: 90, G: 90, B: 170, A: 255},
}
