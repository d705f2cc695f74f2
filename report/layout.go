package report

import (
	"fmt"
	"image/color"
	"math"
	"strings"

	stdfont "golang.org/x/image/font"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"ridgeflank/fault"
	"ridgeflank/survey"
)

// Colours: the colour-blind-safe set of Okabe, M. & Ito, K. (2008), "Color Universal Design
// (CUD): how to make figures and presentations that are friendly to colorblind people",
// https://jfly.uni-koeln.de/color/ (sRGB values as published there).
var (
	okOrange    = color.NRGBA{0xE6, 0x9F, 0x00, 0xFF}
	okSkyBlue   = color.NRGBA{0x56, 0xB4, 0xE9, 0xFF}
	okGreen     = color.NRGBA{0x00, 0x9E, 0x73, 0xFF}
	okBlue      = color.NRGBA{0x00, 0x72, 0xB2, 0xFF}
	okVermilion = color.NRGBA{0xD5, 0x5E, 0x00, 0xFF}
	okPurple    = color.NRGBA{0xCC, 0x79, 0xA7, 0xFF}
	black       = color.NRGBA{0, 0, 0, 0xFF}
	grey        = color.NRGBA{0x70, 0x70, 0x70, 0xFF}
	rule        = color.NRGBA{0xC8, 0xC8, 0xC8, 0xFF}
	shade       = color.NRGBA{0xF2, 0xF2, 0xF2, 0xFF}
)

// tint mixes c with white: f = 0 is c, f = 1 is white (opaque, so PDF and PNG agree).
func tint(c color.NRGBA, f float64) color.NRGBA {
	mix := func(v uint8) uint8 { return uint8(math.Round(float64(v) + (255-float64(v))*f)) }
	return color.NRGBA{mix(c.R), mix(c.G), mix(c.B), 0xFF}
}

var (
	cautionFill = tint(okVermilion, 0.88)
	bandFill    = tint(okSkyBlue, 0.6)
)

// Type faces: Liberation Sans, as shipped with the plotting library.
var (
	sans     = font.Font{Typeface: "Liberation", Variant: "Sans"}
	sansBold = font.Font{Typeface: "Liberation", Variant: "Sans", Weight: stdfont.WeightBold}
	sansIt   = font.Font{Typeface: "Liberation", Variant: "Sans", Style: stdfont.StyleItalic}
)

func style(f font.Font, size vg.Length, c color.Color) text.Style {
	return text.Style{Color: c, Font: font.From(f, size), Handler: plot.DefaultTextHandler, YAlign: draw.YTop}
}

// Page geometry, points.
const (
	margin     = vg.Length(36)
	rowH       = vg.Length(11.5) // one table row
	bodySize   = vg.Length(8.5)  // table and body text
	headSize   = vg.Length(11)   // section headings
	titleSize  = vg.Length(15)
	cautionPad = vg.Length(5)
)

// doc is a laid-out report: its pages, drawn on demand.
type doc struct {
	c       *survey.Check
	o       Options
	w, h    vg.Length
	body    vg.Rectangle // area between the caution box and the footer
	caution []string     // wrapped caution lines
	pages   []func(c draw.Canvas, body vg.Rectangle)
	hazards map[int][]int // line index → indices into c.Hazards
}

func layout(c *survey.Check, o Options) (*doc, error) {
	o, err := normalise(c, o)
	if err != nil {
		return nil, err
	}
	sz := pageSizes[o.PageSize]
	d := &doc{c: c, o: o, w: sz[0], h: sz[1], hazards: map[int][]int{}}
	for i, h := range c.Hazards {
		d.hazards[h.Line] = append(d.hazards[h.Line], i)
	}
	inner := d.w - 2*margin - 2*cautionPad
	d.caution = append([]string{"NOT FOR NAVIGATION"}, wrap(style(sans, bodySize, black), c.Caution, inner)...)
	top := d.h - margin - titleSize - 14 - 8 // title, plan line, gap
	top -= vg.Length(len(d.caution))*rowH + 2*cautionPad + 10
	d.body = vg.Rectangle{Min: vg.Point{X: margin, Y: margin + 16}, Max: vg.Point{X: d.w - margin, Y: top}}

	d.pages = append(d.pages, d.summaryPage)
	for i := 0; i < len(c.Lines); i += 2 {
		d.pages = append(d.pages, d.profilePage(i))
	}
	d.pages = append(d.pages, paginate(d.tables(), d.body.Max.Y-d.body.Min.Y)...)
	if len(d.pages) > MaxPages {
		return nil, fault.Over("max_report_pages", MaxPages, int64(len(d.pages)), "lines",
			"report: the report would have %d pages, more than the %d allowed; split the plan", len(d.pages), MaxPages)
	}
	return d, nil
}

// drawPage draws the frame of page i (title, caution, footer) and its body.
func (d *doc) drawPage(dc draw.Canvas, i int) {
	x0, x1 := margin, d.w-margin
	y := d.h - margin
	gen := style(sans, bodySize, grey)
	gen.XAlign = draw.XRight
	genText := "Generated " + d.o.Provenance.Generated.Format("2006-01-02 15:04 UTC")
	dc.FillText(gen, vg.Point{X: x1, Y: y}, genText)
	title := style(sansBold, titleSize, black)
	dc.FillText(title, vg.Point{X: x0, Y: y}, fit(title, d.o.Title, x1-x0-gen.Width(genText)-12))
	y -= titleSize + 4
	name := d.c.Plan.Name
	if name == "" {
		name = "(unnamed plan)"
	}
	planSt := style(sans, headSize, black)
	dc.FillText(planSt, vg.Point{X: x0, Y: y}, fit(planSt, "Plan: "+name, x1-x0))
	y -= 14 + 8

	// The caution, boxed, on every page.
	bh := vg.Length(len(d.caution))*rowH + 2*cautionPad
	box := vg.Rectangle{Min: vg.Point{X: x0, Y: y - bh}, Max: vg.Point{X: x1, Y: y}}
	dc.FillPolygon(cautionFill, rectPts(box))
	dc.StrokeLines(draw.LineStyle{Color: okVermilion, Width: 1.5}, append(rectPts(box), box.Min))
	ty := y - cautionPad
	for j, l := range d.caution {
		f := sans
		if j == 0 {
			f = sansBold
		}
		dc.FillText(style(f, bodySize, black), vg.Point{X: x0 + cautionPad, Y: ty}, l)
		ty -= rowH
	}

	// Footer.
	foot := style(sans, 7.5, grey)
	foot.YAlign = draw.YBottom
	left := "Expected depths are model estimates and gridded data for planning only."
	if d.c.Plan.ID != "" {
		left = fmt.Sprintf("Plan %s, version %d. %s", d.c.Plan.ID, d.c.Plan.Version, left)
	}
	dc.FillText(foot, vg.Point{X: x0, Y: margin}, left)
	foot.XAlign = draw.XRight
	dc.FillText(foot, vg.Point{X: x1, Y: margin}, fmt.Sprintf("Page %d of %d", i+1, len(d.pages)))

	d.pages[i](dc, d.body)
}

func rectPts(r vg.Rectangle) []vg.Point {
	return []vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}}
}

// wrap breaks s into lines no wider than width in style st (greedy, at spaces).
func wrap(st text.Style, s string, width vg.Length) []string {
	var lines []string
	cur := ""
	for _, w := range strings.Fields(s) {
		try := w
		if cur != "" {
			try = cur + " " + w
		}
		if cur != "" && st.Width(try) > width {
			lines = append(lines, cur)
			cur = w
			continue
		}
		cur = try
	}
	if cur != "" {
		lines = append(lines, cur)
	}
	return lines
}

// fit shortens s with an ellipsis until it is no wider than width.
func fit(st text.Style, s string, width vg.Length) string {
	if st.Width(s) <= width {
		return s
	}
	r := []rune(s)
	for len(r) > 0 && st.Width(string(r)+"…") > width {
		r = r[:len(r)-1]
	}
	return string(r) + "…"
}

// Number formats. NaN prints as an en dash.
const dash = "–"

func num(v float64, prec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return dash
	}
	if math.Abs(v) < 0.5*math.Pow(10, -float64(prec)) {
		v = 0 // no "-0.0"
	}
	return fmt.Sprintf("%.*f", prec, v)
}

// hoursDHM prints a duration in hours as "1 d 04 h 30 min" (rounded to the minute).
func hoursDHM(h float64) string {
	if math.IsNaN(h) || math.IsInf(h, 0) || h < 0 {
		return dash
	}
	m := int64(math.Round(h * 60))
	days, m := m/(24*60), m%(24*60)
	if days > 0 {
		return fmt.Sprintf("%d d %02d h %02d min", days, m/60, m%60)
	}
	return fmt.Sprintf("%d h %02d min", m/60, m%60)
}

// ddm prints a latitude or longitude in degrees and decimal minutes, e.g. 12°34.567'S.
func ddm(v float64, pos, neg string) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return dash
	}
	hemi := pos
	if v < 0 {
		hemi, v = neg, -v
	}
	deg := math.Floor(v)
	mins := (v - deg) * 60
	if mins >= 59.9995 { // would print as 60.000'
		deg, mins = deg+1, 0
	}
	return fmt.Sprintf("%.0f°%06.3f'%s", deg, mins, hemi)
}

func position(lat, lon float64) string {
	return ddm(lat, "N", "S") + " " + ddm(normLon(lon), "E", "W")
}

// normLon brings a longitude into [-180, 180).
func normLon(lon float64) float64 {
	return math.Mod(math.Mod(lon+180, 360)+360, 360) - 180
}

// kv draws key/value rows from the top of r, keys in the left share of the width.
func kv(dc draw.Canvas, x, y, width vg.Length, keyShare float64, rows [][2]string) vg.Length {
	ks := style(sans, bodySize, grey)
	vs := style(sans, bodySize, black)
	kw := vg.Length(keyShare) * width
	for _, r := range rows {
		dc.FillText(ks, vg.Point{X: x, Y: y}, fit(ks, r[0], kw-4))
		dc.FillText(vs, vg.Point{X: x + kw, Y: y}, fit(vs, r[1], width-kw))
		y -= rowH
	}
	return y
}

func heading(dc draw.Canvas, x, y vg.Length, s string) vg.Length {
	dc.FillText(style(sansBold, headSize, black), vg.Point{X: x, Y: y}, s)
	return y - headSize - 5
}
