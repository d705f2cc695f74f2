package evaluate

import (
	"bytes"
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"ridgeflank/fault"
	"ridgeflank/thermal"
)

// Plot formats of a calibration's depth–age figure.
const (
	PlotPNG = "png"
	PlotSVG = "svg"
)

// PlotContentType is the media type of a plot format.
func PlotContentType(format string) string {
	if format == PlotSVG {
		return "image/svg+xml"
	}
	return "image/png"
}

// Plot draws the calibration's depth–age figure (16 × 11 cm; PNG at 150 dpi or SVG): the
// area-weighted median corrected depth of the retained cells in age bins with their 16th–84th
// percentile spread, the fitted curve and the built-in curves (halfspace, psm, gdh1), depth
// increasing downwards. Any other format is fault.UnsupportedFormat.
func (c *Calibration) Plot(format string) ([]byte, error) {
	if format != PlotPNG && format != PlotSVG {
		return nil, fault.New(fault.UnsupportedFormat, "f", "f=%q: the plot is png or svg", format)
	}
	p := plot.New()
	p.Title.Text = fmt.Sprintf("%s fit to %s (%s): %.1f %% of the area excluded", c.Family, c.Dataset, c.regionLabel(), 100*c.ExcludedAreaFraction)
	p.X.Label.Text = "seafloor age (Ma)"
	p.Y.Label.Text = "sediment-corrected depth (m)"
	p.Y.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	p.Add(plotter.NewGrid())
	p.Legend.Left = true // bottom left: deep young seafloor, where no curve runs
	maxAge := 10.0
	if len(c.AgeRangeMa) == 2 {
		maxAge = math.Max(c.AgeRangeMa[1], 1)
	}
	if len(c.Bins) > 0 {
		pts := make(plotter.XYs, len(c.Bins))
		errs := make(plotter.YErrors, len(c.Bins))
		for i, b := range c.Bins {
			pts[i] = plotter.XY{X: b.AgeMa, Y: b.MedianDepthM}
			errs[i].Low, errs[i].High = b.MedianDepthM-b.P16DepthM, b.P84DepthM-b.MedianDepthM
		}
		bars := &plotter.YErrorBars{XYs: pts, YErrors: errs, LineStyle: draw.LineStyle{Color: color.Gray{Y: 110}, Width: vg.Points(0.8)}, CapWidth: vg.Points(3)}
		sc, err := plotter.NewScatter(pts)
		if err != nil {
			return nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: color.Black, Radius: vg.Points(2), Shape: draw.CircleGlyph{}}
		p.Add(bars, sc)
		p.Legend.Add("median of retained cells (16–84 %)", sc)
	}
	curve := func(name string, f func(float64) float64, col color.Color, dashes []vg.Length, width float64) error {
		const n = 200
		pts := make(plotter.XYs, 0, n+1)
		for i := 0; i <= n; i++ {
			a := maxAge * float64(i) / n
			if d := f(a); !math.IsNaN(d) {
				pts = append(pts, plotter.XY{X: a, Y: d})
			}
		}
		l, err := plotter.NewLine(pts)
		if err != nil {
			return err
		}
		l.LineStyle = draw.LineStyle{Color: col, Width: vg.Points(width), Dashes: dashes}
		p.Add(l)
		p.Legend.Add(name, l)
		return nil
	}
	for i, id := range thermal.BuiltinIDs() {
		m, err := thermal.Builtin(id)
		if err != nil {
			return nil, err
		}
		cols := []color.Color{color.RGBA{R: 70, G: 130, B: 180, A: 255}, color.RGBA{R: 60, G: 160, B: 90, A: 255}, color.RGBA{R: 150, G: 90, B: 170, A: 255}}
		if err := curve(id, m.DepthM, cols[i%len(cols)], []vg.Length{vg.Points(4), vg.Points(3)}, 1); err != nil {
			return nil, err
		}
	}
	fitted := c.fittedCurve()
	if err := curve("fitted ("+c.Family+")", fitted, color.RGBA{R: 200, G: 30, B: 30, A: 255}, nil, 2); err != nil {
		return nil, err
	}
	w, h := 16*vg.Centimeter, 11*vg.Centimeter
	var buf bytes.Buffer
	if format == PlotSVG {
		cv := vgsvg.New(w, h)
		p.Draw(draw.New(cv))
		if _, err := cv.WriteTo(&buf); err != nil {
			return nil, err
		}
		return buf.Bytes(), nil
	}
	cv := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(150), vgimg.UseBackgroundColor(color.White))
	p.Draw(draw.New(cv))
	if _, err := (vgimg.PngCanvas{Canvas: cv}).WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

func (c *Calibration) regionLabel() string {
	if c.Region != "" {
		return "region " + c.Region
	}
	return "polygon"
}

// fittedCurve is the fitted depth–age curve (m, positive down, against Ma).
func (c *Calibration) fittedCurve() func(float64) float64 {
	if c.Params != nil {
		if m, err := thermal.NewModel(*c.Params); err == nil {
			return m.DepthM
		}
	}
	if c.Curve != nil {
		return c.Curve.DepthM
	}
	return func(float64) float64 { return math.NaN() }
}
