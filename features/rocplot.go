// ROC pictures of the evaluate stage, in the look of the other pictures.

package features

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
)

// ROCCurve is one receiver operating characteristic: false-positive rate
// against true-positive rate, both from 0 to 1, points in curve order.
type ROCCurve struct {
	Label    string
	FPR, TPR []float64
	// Style picks the colour (0 the dark trace, then the defect-line
	// colours of the envelope pictures); Dashed draws the curve dashed.
	Style  int
	Dashed bool
}

// ROCPanel is one plot of an ROC picture.
type ROCPanel struct {
	Title  string
	Curves []ROCCurve
	// MaxFPR, when > 0, marks the false-positive rate that bounds the
	// partial AUC with a dotted vertical line.
	MaxFPR float64
}

// rocTrace is the colour of the first curve: the envelope pictures' trace.
var rocTrace = color.NRGBA{R: 20, G: 34, B: 70, A: 255}

func rocColour(i int) color.Color {
	if i <= 0 {
		return rocTrace
	}
	return lineColours[(i-1)%len(lineColours)]
}

// ROCPNG draws the panels side by side, each with its curves, the chance
// diagonal and the partial-AUC bound, and writes a PNG to path atomically
// (unchanged bytes leave the file as it is).
func ROCPNG(path string, panels []ROCPanel) error {
	if len(panels) == 0 {
		return fmt.Errorf("features: roc: no panels")
	}
	const panelW, height = 4.6 * vg.Inch, 4.6 * vg.Inch
	width := panelW * vg.Length(len(panels))
	img := vgimg.New(width, height)
	dc := draw.New(img)
	grey := color.NRGBA{R: 150, G: 156, B: 162, A: 255}
	for i, p := range panels {
		plt := plot.New()
		plt.Title.Text = p.Title
		plt.X.Label.Text = "false-positive rate"
		plt.Y.Label.Text = "true-positive rate"
		plt.X.Min, plt.X.Max, plt.Y.Min, plt.Y.Max = 0, 1, 0, 1
		chance, err := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}})
		if err != nil {
			return fmt.Errorf("features: roc: %w", err)
		}
		chance.Color = grey
		chance.Dashes = []vg.Length{vg.Points(2), vg.Points(3)}
		plt.Add(chance)
		if p.MaxFPR > 0 && p.MaxFPR < 1 {
			b, err := plotter.NewLine(plotter.XYs{{X: p.MaxFPR, Y: 0}, {X: p.MaxFPR, Y: 1}})
			if err != nil {
				return fmt.Errorf("features: roc: %w", err)
			}
			b.Color = grey
			b.Dashes = []vg.Length{vg.Points(1), vg.Points(2)}
			plt.Add(b)
			plt.Legend.Add(fmt.Sprintf("partial AUC range (FPR ≤ %g)", p.MaxFPR), b)
		}
		for _, c := range p.Curves {
			if len(c.FPR) != len(c.TPR) || len(c.FPR) < 2 {
				return fmt.Errorf("features: roc: curve %q: %d and %d points", c.Label, len(c.FPR), len(c.TPR))
			}
			pts := make(plotter.XYs, len(c.FPR))
			for k := range pts {
				x, y := c.FPR[k], c.TPR[k]
				if !(x >= 0 && x <= 1 && y >= 0 && y <= 1) || math.IsNaN(x) {
					return fmt.Errorf("features: roc: curve %q: point %d (%v, %v) outside the unit square", c.Label, k, x, y)
				}
				pts[k] = plotter.XY{X: x, Y: y}
			}
			ln, err := plotter.NewLine(pts)
			if err != nil {
				return fmt.Errorf("features: roc: %w", err)
			}
			ln.Color = rocColour(c.Style)
			ln.Width = vg.Points(1.6)
			if c.Dashed {
				ln.Dashes = []vg.Length{vg.Points(5), vg.Points(3)}
			}
			plt.Add(ln)
			plt.Legend.Add(c.Label, ln)
		}
		plt.Legend.Top = false
		plt.Legend.Left = false
		plt.Legend.XOffs = -vg.Points(4)
		plt.Legend.YOffs = vg.Points(4)
		c := draw.Crop(dc, panelW*vg.Length(i), -(width - panelW*vg.Length(i+1)), 0, 0)
		plt.Draw(c)
	}
	return savePNG(path, img)
}
