package report

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"ridgeflank/survey"
)

// maxDrawn is the most samples of one line a profile or the map draws; longer lines are thinned
// keeping, in every stretch, its first and last sample, the shallowest, the deepest and the most
// uncertain, and every change of source or of data/no data (see thin).
const maxDrawn = 2000

// hazardGlyph is how each hazard kind is marked on the profile and on the map: shape and colour
// both differ, so the marks read without colour too.
func hazardGlyph(kind string) draw.GlyphStyle {
	switch kind {
	case survey.HazardShallow:
		return draw.GlyphStyle{Color: hazardColour(kind), Radius: 4.5, Shape: draw.PyramidGlyph{}}
	case survey.HazardSeamount:
		return draw.GlyphStyle{Color: hazardColour(kind), Radius: 4.5, Shape: draw.BoxGlyph{}}
	case survey.HazardSlope:
		return draw.GlyphStyle{Color: hazardColour(kind), Radius: 4.5, Shape: draw.CircleGlyph{}}
	default:
		return draw.GlyphStyle{Color: hazardColour(kind), Radius: 4, Shape: draw.CrossGlyph{}}
	}
}

func hazardColour(kind string) color.NRGBA {
	switch kind {
	case survey.HazardShallow:
		return okVermilion
	case survey.HazardSeamount:
		return okPurple
	case survey.HazardSlope:
		return okGreen
	default:
		return black
	}
}

var (
	observedStyle  = draw.LineStyle{Color: okBlue, Width: 1.4}
	predictedStyle = draw.LineStyle{Color: okOrange, Width: 1.4, Dashes: []vg.Length{5, 2.5}}
	safetyStyle    = draw.LineStyle{Color: okVermilion, Width: 0.9, Dashes: []vg.Length{2, 2}}
)

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func at(xs []float64, i int) float64 {
	if i < 0 || i >= len(xs) {
		return math.NaN()
	}
	return xs[i]
}

func atS(xs []string, i int) string {
	if i < 0 || i >= len(xs) {
		return ""
	}
	return xs[i]
}

// thin picks at most about maxDrawn sample indices of s, in order (all of them for short lines).
func thin(s *survey.Samples) []int {
	n := len(s.DistanceKm)
	idx := make([]int, 0, min(n, 3*maxDrawn))
	if n <= maxDrawn {
		for i := range n {
			idx = append(idx, i)
		}
		return idx
	}
	k := (n + maxDrawn/5 - 1) / (maxDrawn / 5) // samples per stretch; five kept each
	for a := 0; a < n; a += k {
		b := min(a+k, n)
		lo, hi, un := -1, -1, -1
		for i := a; i < b; i++ {
			dv, uv := at(s.ExpectedDepthM, i), at(s.UncertaintyM, i)
			if finite(dv) && (lo < 0 || dv < s.ExpectedDepthM[lo]) {
				lo = i
			}
			if finite(dv) && (hi < 0 || dv > s.ExpectedDepthM[hi]) {
				hi = i
			}
			if finite(uv) && (un < 0 || uv > s.UncertaintyM[un]) {
				un = i
			}
			if i > 0 && (atS(s.DepthSource, i) != atS(s.DepthSource, i-1) || finite(dv) != finite(at(s.ExpectedDepthM, i-1))) {
				idx = append(idx, i-1, i)
			}
		}
		idx = append(idx, a, b-1)
		for _, i := range []int{lo, hi, un} {
			if i >= 0 {
				idx = append(idx, i)
			}
		}
	}
	slices.Sort(idx)
	return slices.Compact(idx)
}

// profilePage draws lines first and first+1.
func (d *doc) profilePage(first int) func(draw.Canvas, vg.Rectangle) {
	return func(dc draw.Canvas, body vg.Rectangle) {
		const gap = 18
		h := (body.Max.Y - body.Min.Y - gap) / 2
		for k := range 2 {
			i := first + k
			if i >= len(d.c.Lines) {
				return
			}
			top := body.Max.Y - vg.Length(k)*(h+gap)
			d.drawProfile(dc, i, vg.Rectangle{Min: vg.Point{X: body.Min.X, Y: top - h}, Max: vg.Point{X: body.Max.X, Y: top}})
		}
	}
}

// sub is the part r of the canvas.
func sub(dc draw.Canvas, r vg.Rectangle) draw.Canvas {
	return draw.Canvas{Canvas: dc.Canvas, Rectangle: r}
}

func xys(s *survey.Samples, idx []int, y func(i int) float64) plotter.XYs {
	out := make(plotter.XYs, len(idx))
	for j, i := range idx {
		out[j] = plotter.XY{X: s.DistanceKm[i], Y: y(i)}
	}
	return out
}

// drawProfile draws the depth profile of line i in r: heading, plot, legend, a summary line.
func (d *doc) drawProfile(dc draw.Canvas, i int, r vg.Rectangle) {
	l := &d.c.Lines[i]
	s := &l.Samples
	y := heading(dc, r.Min.X, r.Max.Y, lineLabel(d.c, i)+": expected depth along the line")

	summary := fmt.Sprintf("Length %s km (%s nmi); time on line %s h; expected depth %s to %s m, mean %s m; swath at the shallowest %s m; line spacing %s m; hazards %d.",
		num(l.LengthKm, 2), num(l.LengthNmi, 2), num(l.TimeOnLineH, 2), num(l.MinDepthM, 0), num(l.MaxDepthM, 0),
		num(l.MeanDepthM, 0), num(l.MinSwathM, 0), num(l.LineSpacingM, 0), len(d.hazards[i]))
	if n := len(s.DistanceKm); n > maxDrawn {
		summary += fmt.Sprintf(" The curve is drawn through %d of the %d samples, keeping the shallowest, deepest and most uncertain of every stretch.", len(thin(s)), n)
	}
	st := style(sans, bodySize, black)
	lines := wrap(st, summary, r.Max.X-r.Min.X)
	for j, t := range lines {
		dc.FillText(st, vg.Point{X: r.Min.X, Y: r.Min.Y + vg.Length(len(lines)-j)*rowH}, t)
	}

	const legendW = 150
	plotR := vg.Rectangle{Min: vg.Point{X: r.Min.X, Y: r.Min.Y + vg.Length(len(lines))*rowH + 6}, Max: vg.Point{X: r.Max.X - legendW, Y: y}}
	p, leg := d.profilePlot(i)
	p.Draw(sub(dc, plotR))
	leg.Draw(sub(dc, vg.Rectangle{Min: vg.Point{X: r.Max.X - legendW + 10, Y: plotR.Min.Y}, Max: vg.Point{X: r.Max.X, Y: plotR.Max.Y - 6}}))
}

func axisStyle(a *plot.Axis, label string) {
	a.Label.Text = label
	a.Label.TextStyle.Font = font.From(sans, 8.5)
	a.Tick.Label.Font = font.From(sans, 8)
}

func newLegend() plot.Legend {
	l := plot.NewLegend()
	l.Top, l.Left = true, true
	l.TextStyle.Font = font.From(sans, 7.5)
	l.ThumbnailWidth = 18
	l.Padding = 3
	return l
}

// profilePlot builds the plot of line i: distance (km) against expected depth (m, positive down,
// deeper lower), the uncertainty band, the observed and predicted stretches, the safety depth and
// the hazards. The legend is returned to be drawn beside it.
func (d *doc) profilePlot(i int) (*plot.Plot, plot.Legend) {
	l := &d.c.Lines[i]
	s := &l.Samples
	set := d.c.Plan.Settings
	p := plot.New()
	axisStyle(&p.X, "Distance along the line (km)")
	axisStyle(&p.Y, "Expected depth (m, positive down)")
	p.Y.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	p.X.Tick.Marker, p.Y.Tick.Marker = stepTicks{max: 10}, stepTicks{max: 9}
	p.Add(plotter.NewGrid())
	leg := newLegend()
	idx := thin(s)

	depth := func(i int) float64 { return at(s.ExpectedDepthM, i) }
	unc := func(i int) float64 { return at(s.UncertaintyM, i) }

	// Ranges from everything drawn.
	ymin, ymax := math.Inf(1), math.Inf(-1)
	xmax := l.LengthKm
	grow := func(v float64) {
		if finite(v) {
			ymin, ymax = math.Min(ymin, v), math.Max(ymax, v)
		}
	}
	for _, j := range idx {
		x, dv, uv := at(s.DistanceKm, j), depth(j), unc(j)
		if finite(x) && (x > xmax || !finite(xmax)) {
			xmax = x
		}
		if !finite(x) {
			continue
		}
		grow(dv)
		if finite(dv) && finite(uv) {
			grow(math.Max(0, dv-uv))
			grow(dv + uv)
		}
	}
	if set.SafetyDepthM > 0 {
		grow(set.SafetyDepthM)
	}
	for _, hi := range d.hazards[i] {
		grow(d.c.Hazards[hi].DepthM)
	}
	if !finite(ymin) {
		ymin, ymax = 0, 1000
		p.Title.Text = "No expected depth on this line"
		p.Title.TextStyle.Font = font.From(sansBold, 9)
	}
	pad := math.Max(0.08*(ymax-ymin), 20)
	ymin, ymax = math.Max(0, ymin-pad), ymax+pad
	if !finite(xmax) || xmax <= 0 {
		xmax = 1
	}
	p.X.Min, p.X.Max = 0, xmax
	p.Y.Min, p.Y.Max = ymin, ymax

	// Hazard stretches, shaded under everything else.
	for _, hi := range d.hazards[i] {
		h := d.c.Hazards[hi]
		x0, x1 := at(s.DistanceKm, h.FromSample), at(s.DistanceKm, h.ToSample)
		if !finite(x0) || !finite(x1) || x1 <= x0 {
			continue
		}
		span, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: ymin}, {X: x1, Y: ymin}, {X: x1, Y: ymax}, {X: x0, Y: ymax}})
		if err == nil {
			span.Color = tint(hazardColour(h.Kind), 0.8)
			span.LineStyle.Width = 0
			p.Add(span)
		}
	}

	// Uncertainty band, one polygon per stretch with depth and uncertainty.
	var band *plotter.Polygon
	runs(idx, func(j int) bool { return finite(at(s.DistanceKm, j)) && finite(depth(j)) && finite(unc(j)) }, nil, func(run []int) {
		if len(run) < 2 {
			return
		}
		ring := xys(s, run, func(j int) float64 { return math.Max(0, depth(j)-unc(j)) })
		lower := xys(s, run, func(j int) float64 { return depth(j) + unc(j) })
		slices.Reverse(lower)
		poly, err := plotter.NewPolygon(append(ring, lower...))
		if err != nil {
			return
		}
		poly.Color = bandFill
		poly.LineStyle.Width = 0
		p.Add(poly)
		band = poly
	})
	if band != nil {
		leg.Add("Expected depth ± uncertainty", band)
	}

	// Expected depth by source; a stretch runs on to the first sample of the next so that the
	// curve stays continuous where the source changes.
	seen := map[string]bool{}
	runs(idx, func(j int) bool { return finite(at(s.DistanceKm, j)) && finite(depth(j)) },
		func(a, b int) bool { return atS(s.DepthSource, a) == atS(s.DepthSource, b) },
		func(run []int) {
			src := atS(s.DepthSource, run[0])
			pts := run
			if k := slices.Index(idx, run[len(run)-1]); k+1 < len(idx) {
				if nx := idx[k+1]; finite(depth(nx)) && finite(at(s.DistanceKm, nx)) {
					pts = append(slices.Clone(run), nx)
				}
			}
			ln, err := plotter.NewLine(xys(s, pts, depth))
			if err != nil {
				return
			}
			switch src {
			case survey.SourceObserved:
				ln.LineStyle = observedStyle
			default:
				ln.LineStyle = predictedStyle
			}
			p.Add(ln)
			if !seen[src] {
				seen[src] = true
				label := "Predicted depth (cooling model)"
				if src == survey.SourceObserved {
					label = "Observed depth (dataset)"
				}
				leg.Add(label, ln)
			}
		})

	if set.SafetyDepthM > 0 {
		ln, err := plotter.NewLine(plotter.XYs{{X: 0, Y: set.SafetyDepthM}, {X: xmax, Y: set.SafetyDepthM}})
		if err == nil {
			ln.LineStyle = safetyStyle
			p.Add(ln)
			leg.Add("Safety depth "+num(set.SafetyDepthM, 0)+" m", ln)
		}
	}

	// Hazards: the stretch shaded behind the data, the worst sample marked and numbered.
	kinds := map[string]bool{}
	for _, hi := range d.hazards[i] {
		h := d.c.Hazards[hi]
		g := hazardGlyph(h.Kind)
		y := h.DepthM
		if !finite(y) {
			y = ymin + 0.06*(ymax-ymin)
		}
		if !finite(h.DistanceKm) {
			continue
		}
		pt := plotter.XYs{{X: h.DistanceKm, Y: y}}
		sc, err := plotter.NewScatter(pt)
		if err != nil {
			continue
		}
		sc.GlyphStyle = g
		p.Add(sc)
		lb, err := plotter.NewLabels(plotter.XYLabels{XYs: pt, Labels: []string{"H" + strconv.Itoa(hi+1)}})
		if err == nil {
			lb.Offset = vg.Point{X: 5, Y: 3}
			for k := range lb.TextStyle {
				lb.TextStyle[k].Font = font.From(sansBold, 7.5)
				lb.TextStyle[k].Color = black
			}
			p.Add(lb)
		}
		if !kinds[h.Kind] {
			kinds[h.Kind] = true
			label, _ := hazardLabel(h.Kind)
			leg.Add("Hazard: "+lower(label), sc)
		}
	}
	return p, leg
}

func lower(s string) string {
	if s == "" {
		return s
	}
	return string(s[0]|0x20) + s[1:]
}

// runs calls f with each maximal stretch of idx whose members pass ok and whose neighbours are
// alike (same is nil: any neighbours are alike).
func runs(idx []int, ok func(int) bool, same func(a, b int) bool, f func([]int)) {
	var cur []int
	for _, j := range idx {
		if !ok(j) || (len(cur) > 0 && same != nil && !same(cur[len(cur)-1], j)) {
			if len(cur) > 0 {
				f(cur)
			}
			cur = nil
			if !ok(j) {
				continue
			}
		}
		cur = append(cur, j)
	}
	if len(cur) > 0 {
		f(cur)
	}
}

// stepTicks marks an axis at the finest round step (1, 2 or 5 × 10^k) that leaves at most max
// steps between labelled ticks, with an unlabelled tick half-way between.
type stepTicks struct{ max int }

func (t stepTicks) Ticks(lo, hi float64) []plot.Tick {
	span := hi - lo
	if !(span > 0) || !finite(span) {
		return nil
	}
	n := float64(max(t.max, 2))
	step := math.Pow(10, math.Floor(math.Log10(span/n)))
	for _, m := range []float64{1, 2, 5, 10} {
		if span/(m*step) <= n {
			step *= m
			break
		}
	}
	prec := max(0, int(-math.Floor(math.Log10(step))))
	var ticks []plot.Tick
	for k := math.Ceil(lo / step * 2); k <= math.Floor(hi/step*2); k++ {
		t := plot.Tick{Value: k * step / 2}
		if math.Mod(k, 2) == 0 {
			t.Label = strconv.FormatFloat(k*step/2, 'f', prec, 64)
		}
		ticks = append(ticks, t)
	}
	return ticks
}
