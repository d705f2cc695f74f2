package report

import (
	"fmt"
	"image/color"
	"strconv"
	"strings"

	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"ridgeflank/survey"
)

// item is one block of a table page: a heading, a column header or a row, drawn with its top
// at top between x0 and x1.
type item struct {
	h    vg.Length
	draw func(dc draw.Canvas, x0, x1, top vg.Length)
}

// section is a table: its heading, its column header (repeated on every page it runs onto)
// and its rows.
type section struct {
	title  string
	header item
	rows   []item
}

const sectionGap = vg.Length(14)

func titleItem(s string) item {
	return item{h: headSize + 6, draw: func(dc draw.Canvas, x0, _, top vg.Length) { heading(dc, x0, top, s) }}
}

// paginate flows sections onto pages of the given body height.
func paginate(secs []section, height vg.Length) []func(draw.Canvas, vg.Rectangle) {
	var pages [][]item
	var cur []item
	used := vg.Length(0)
	flush := func() {
		if len(cur) > 0 {
			pages = append(pages, cur)
		}
		cur, used = nil, 0
	}
	put := func(it item) { cur = append(cur, it); used += it.h }
	for _, s := range secs {
		start := titleItem(s.title)
		need := start.h + s.header.h
		if len(s.rows) > 0 {
			need += s.rows[0].h
		}
		if len(cur) > 0 && used+sectionGap+need > height {
			flush()
		}
		if len(cur) > 0 {
			put(item{h: sectionGap, draw: func(draw.Canvas, vg.Length, vg.Length, vg.Length) {}})
		}
		put(start)
		put(s.header)
		for _, r := range s.rows {
			if used+r.h > height && len(cur) > 2 {
				flush()
				put(titleItem(s.title + " (continued)"))
				put(s.header)
			}
			put(r)
		}
	}
	flush()
	out := make([]func(draw.Canvas, vg.Rectangle), len(pages))
	for i, items := range pages {
		out[i] = func(dc draw.Canvas, body vg.Rectangle) {
			y := body.Max.Y
			for _, it := range items {
				it.draw(dc, body.Min.X, body.Max.X, y)
				y -= it.h
			}
		}
	}
	return out
}

// column of a table: a header (lines split at "\n"), a share of the width, right-aligned or not.
type column struct {
	name  string
	share float64
	right bool
}

func headerItem(cols []column) item {
	lines := 1
	for _, c := range cols {
		lines = max(lines, strings.Count(c.name, "\n")+1)
	}
	h := vg.Length(lines)*rowH + 3
	return item{h: h, draw: func(dc draw.Canvas, x0, x1, top vg.Length) {
		st := style(sansBold, 7.5, black)
		x := x0
		for _, c := range cols {
			w := vg.Length(c.share) * (x1 - x0)
			for j, l := range strings.Split(c.name, "\n") {
				cellText(dc, st, c, x, w, top-vg.Length(j)*rowH, l)
			}
			x += w
		}
		dc.StrokeLine2(draw.LineStyle{Color: black, Width: 0.8}, x0, top-h+1, x1, top-h+1)
	}}
}

func cellText(dc draw.Canvas, st text.Style, c column, x, w, top vg.Length, s string) {
	const pad = 3
	s = fit(st, s, w-2*pad)
	if c.right {
		st.XAlign = draw.XRight
		dc.FillText(st, vg.Point{X: x + w - pad, Y: top}, s)
		return
	}
	dc.FillText(st, vg.Point{X: x + pad, Y: top}, s)
}

// rowItem is one table row; bold rows are shaded.
func rowItem(cols []column, cells []string, bold bool) item {
	return item{h: rowH, draw: func(dc draw.Canvas, x0, x1, top vg.Length) {
		f := sans
		if bold {
			f = sansBold
			dc.FillPolygon(shade, rectPts(vg.Rectangle{Min: vg.Point{X: x0, Y: top - rowH}, Max: vg.Point{X: x1, Y: top}}))
		}
		st := style(f, bodySize, black)
		x := x0
		for i, c := range cols {
			w := vg.Length(c.share) * (x1 - x0)
			if i < len(cells) {
				cellText(dc, st, c, x, w, top-1.5, cells[i])
			}
			x += w
		}
		dc.StrokeLine2(draw.LineStyle{Color: rule, Width: 0.4}, x0, top-rowH, x1, top-rowH)
	}}
}

// noteItems are lines of text spanning a table from the left edge of column from, wrapped.
func noteItems(cols []column, from int, s string, c color.Color, f font.Font, width vg.Length) []item {
	off := 0.0
	for _, col := range cols[:from] {
		off += col.share
	}
	st := style(f, bodySize, c)
	var items []item
	for _, l := range wrap(st, s, vg.Length(1-off)*width-6) {
		items = append(items, item{h: rowH, draw: func(dc draw.Canvas, x0, x1, top vg.Length) {
			dc.FillText(st, vg.Point{X: x0 + vg.Length(off)*(x1-x0) + 3, Y: top - 1.5}, l)
		}})
	}
	return items
}

func lineLabel(c *survey.Check, i int) string {
	name := ""
	if i >= 0 && i < len(c.Lines) {
		name = c.Lines[i].Name
	}
	if name == "" && i >= 0 && i < len(c.Plan.Lines) {
		name = c.Plan.Lines[i].Name
	}
	if name == "" {
		return fmt.Sprintf("Line %d", i+1)
	}
	return fmt.Sprintf("Line %d: %s", i+1, name)
}

func legLabel(g survey.Leg) string {
	from, to := g.FromName, g.ToName
	if from == "" {
		from = "WP" + strconv.Itoa(g.From+1)
	}
	if to == "" {
		to = "WP" + strconv.Itoa(g.To+1)
	}
	return from + " – " + to
}

// Hazard kinds for people, and the unit of the quantity each tests.
var hazardKinds = map[string]struct{ label, unit string }{
	survey.HazardShallow:  {"Shallower than safety depth", " m"},
	survey.HazardSeamount: {"Observed above prediction", " m"},
	survey.HazardSlope:    {"Steep slope", "°"},
	survey.HazardNoData:   {"No expected depth", ""},
}

func hazardLabel(kind string) (label, unit string) {
	if k, ok := hazardKinds[kind]; ok {
		return k.label, k.unit
	}
	return kind, ""
}

func withUnit(v float64, prec int, unit string) string {
	s := num(v, prec)
	if s == dash {
		return s
	}
	return s + unit
}

// tables are the sections after the profiles.
func (d *doc) tables() []section {
	c := d.c
	width := d.w - 2*margin
	var secs []section

	legCols := []column{
		{"Line", 0.17, false}, {"Leg", 0.30, false}, {"Length\n(km)", 0.075, true}, {"Length\n(nmi)", 0.075, true},
		{"Azimuth\n(°)", 0.07, true}, {"Time\n(h)", 0.07, true}, {"Depth\nmin (m)", 0.08, true},
		{"Depth\nmean (m)", 0.08, true}, {"Depth\nmax (m)", 0.08, true},
	}
	legs := section{title: "Legs and lines", header: headerItem(legCols)}
	for i, l := range c.Lines {
		for j, g := range l.Legs {
			name := ""
			if j == 0 {
				name = lineLabel(c, i)
			}
			legs.rows = append(legs.rows, rowItem(legCols, []string{name, legLabel(g), num(g.LengthKm, 2), num(g.LengthNmi, 2),
				num(g.AzimuthDeg, 1), num(g.TimeH, 2), num(g.MinDepthM, 0), num(g.MeanDepthM, 0), num(g.MaxDepthM, 0)}, false))
		}
		first := ""
		if len(l.Legs) == 0 {
			first = lineLabel(c, i)
		}
		legs.rows = append(legs.rows, rowItem(legCols, []string{first, "Line total", num(l.LengthKm, 2), num(l.LengthNmi, 2), "",
			num(l.TimeOnLineH, 2), num(l.MinDepthM, 0), num(l.MeanDepthM, 0), num(l.MaxDepthM, 0)}, true))
		note := fmt.Sprintf("Swath at the shallowest expected depth %s m; line spacing for %s %% overlap %s m; area covered %s km².",
			num(l.MinSwathM, 0), num(c.Plan.Settings.OverlapPct, 0), num(l.LineSpacingM, 0), num(l.AreaKm2, 1))
		legs.rows = append(legs.rows, noteItems(legCols, 1, note, grey, sansIt, width)...)
	}
	if len(c.Lines) == 0 {
		legs.rows = append(legs.rows, noteItems(legCols, 0, "The plan has no lines.", black, sans, width)...)
	}
	secs = append(secs, legs)

	trCols := []column{{"From", 0.3, false}, {"To", 0.3, false}, {"Length\n(km)", 0.13, true}, {"Length\n(nmi)", 0.13, true}, {"Time\n(h)", 0.14, true}}
	tr := section{title: "Transits and totals", header: headerItem(trCols)}
	for _, t := range c.Transits {
		tr.rows = append(tr.rows, rowItem(trCols, []string{lineLabel(c, t.FromLine) + " (end)", lineLabel(c, t.ToLine) + " (start)",
			num(t.LengthKm, 2), num(t.LengthNmi, 2), num(t.TimeH, 2)}, false))
	}
	tt := c.Totals
	tr.rows = append(tr.rows,
		rowItem(trCols, []string{"On line", "", num(tt.LengthKm, 2), num(tt.LengthNmi, 2), num(tt.TimeOnLineH, 2)}, true),
		rowItem(trCols, []string{"In transit", "", num(tt.TransitKm, 2), num(tt.TransitNmi, 2), num(tt.TimeInTransitH, 2)}, true),
		rowItem(trCols, []string{"Total", "", num(tt.LengthKm+tt.TransitKm, 2), num(tt.LengthNmi+tt.TransitNmi, 2), num(tt.TimeTotalH, 2)}, true),
	)
	secs = append(secs, tr)

	hzCols := []column{
		{"#", 0.05, false}, {"Kind", 0.22, false}, {"Line", 0.15, false}, {"At\n(km)", 0.07, true}, {"Extent\n(km)", 0.07, true},
		{"Position\n(lat, lon)", 0.22, false}, {"Expected\ndepth (m)", 0.08, true}, {"Tested\nvalue", 0.07, true}, {"Limit", 0.07, true},
	}
	hz := section{title: "Hazards", header: headerItem(hzCols)}
	for i, h := range c.Hazards {
		label, unit := hazardLabel(h.Kind)
		prec := 0
		if unit == "°" {
			prec = 1
		}
		hz.rows = append(hz.rows, rowItem(hzCols, []string{"H" + strconv.Itoa(i+1), label, lineLabel(c, h.Line), num(h.DistanceKm, 2),
			num(h.LengthKm, 2), position(h.Lat, h.Lon), num(h.DepthM, 0), withUnit(h.Value, prec, unit), withUnit(h.Limit, prec, unit)}, false))
		if h.Reason != "" {
			hz.rows = append(hz.rows, noteItems(hzCols, 1, h.Reason, grey, sansIt, width)...)
		}
	}
	if len(c.Hazards) == 0 {
		hz.rows = append(hz.rows, noteItems(hzCols, 0, "No hazards were found under these settings. That is not a survey: see the caution.", black, sans, width)...)
	}
	secs = append(secs, hz)

	gpCols := []column{{"Between", 0.34, false}, {"At (km along\nthe first)", 0.12, true}, {"Position\n(lat, lon)", 0.26, false},
		{"Separation\n(m)", 0.14, true}, {"Uncovered\nwidth (m)", 0.14, true}}
	gp := section{title: "Coverage gaps", header: headerItem(gpCols)}
	for _, g := range c.Gaps {
		gp.rows = append(gp.rows, rowItem(gpCols, []string{fmt.Sprintf("Line %d and line %d", g.LineA+1, g.LineB+1), num(g.DistanceKm, 2),
			position(g.Lat, g.Lon), num(g.SeparationM, 0), num(g.GapM, 0)}, false))
	}
	if len(c.Gaps) == 0 {
		gp.rows = append(gp.rows, noteItems(gpCols, 0, "No gaps between adjacent swaths at the line spacing the plan has.", black, sans, width)...)
	}
	secs = append(secs, gp)
	return secs
}
