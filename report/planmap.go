package report

import (
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// maxWaypointLabels: with more waypoints than this only line starts are named on the map.
const maxWaypointLabels = 40

// degreeTicks labels longitude or latitude ticks in degrees with a hemisphere, e.g. 12.5°W.
type degreeTicks struct{ lon bool }

func (t degreeTicks) Ticks(lo, hi float64) []plot.Tick {
	ticks := stepTicks{max: 5}.Ticks(lo, hi)
	for i := range ticks {
		if ticks[i].Label == "" {
			continue
		}
		prec := 0 // as many decimals as the step's label has
		if j := strings.IndexByte(ticks[i].Label, '.'); j >= 0 {
			prec = len(ticks[i].Label) - j - 1
		}
		v := ticks[i].Value
		pos, neg := "N", "S"
		if t.lon {
			v, pos, neg = normLon(v), "E", "W"
		}
		h := pos
		if v < 0 {
			h, v = neg, -v
		}
		s := strconv.FormatFloat(v, 'f', prec, 64)
		if f, _ := strconv.ParseFloat(s, 64); f == 0 || (!t.lon && f == 90) || (t.lon && f == 180) {
			h = ""
		}
		ticks[i].Label = s + "°" + h
	}
	return ticks
}

// drawMap draws the plan in longitude and latitude, the east-west scale shrunk by the cosine of
// the middle latitude so that distances read alike both ways near it. Lines are drawn through
// their samples, which lie on the WGS84 geodesics the check measured.
func (d *doc) drawMap(dc draw.Canvas) {
	c := d.c
	// Unwrap longitudes around the first sample so a plan across 180° stays in one piece.
	ref := math.NaN()
	lonOf := func(lon float64) float64 {
		if math.IsNaN(ref) {
			ref = lon
		}
		return ref + normLon(lon-ref)
	}
	p := plot.New()
	axisStyle(&p.X, "")
	axisStyle(&p.Y, "")
	p.X.Tick.Marker = degreeTicks{lon: true}
	p.Y.Tick.Marker = degreeTicks{}
	p.Add(plotter.NewGrid())

	lonMin, lonMax, latMin, latMax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	add := func(lon, lat float64) {
		lonMin, lonMax = math.Min(lonMin, lon), math.Max(lonMax, lon)
		latMin, latMax = math.Min(latMin, lat), math.Max(latMax, lat)
	}
	var ends [][2]plotter.XY // first and last drawn point of each line
	labelStyle := func(f font.Font, size vg.Length) func(*plotter.Labels) {
		return func(lb *plotter.Labels) {
			for k := range lb.TextStyle {
				lb.TextStyle[k].Font = font.From(f, size)
			}
		}
	}
	var startPts plotter.XYs
	var startNames []string
	for i := range c.Lines {
		s := &c.Lines[i].Samples
		var pts plotter.XYs
		for _, j := range thin(s) {
			lon, lat := at(s.Lon, j), at(s.Lat, j)
			if !finite(lon) || !finite(lat) {
				continue
			}
			lon = lonOf(lon)
			add(lon, lat)
			pts = append(pts, plotter.XY{X: lon, Y: lat})
		}
		if len(pts) == 0 {
			ends = append(ends, [2]plotter.XY{{X: math.NaN()}, {X: math.NaN()}})
			continue
		}
		ends = append(ends, [2]plotter.XY{pts[0], pts[len(pts)-1]})
		startPts = append(startPts, pts[0])
		startNames = append(startNames, "L"+strconv.Itoa(i+1))
		if len(pts) > 1 {
			ln, err := plotter.NewLine(pts)
			if err == nil {
				ln.LineStyle = draw.LineStyle{Color: okBlue, Width: 1.3}
				p.Add(ln)
			}
		}
	}
	// Transits in sailing order, dotted.
	for _, t := range c.Transits {
		if t.FromLine < 0 || t.FromLine >= len(ends) || t.ToLine < 0 || t.ToLine >= len(ends) {
			continue
		}
		a, b := ends[t.FromLine][1], ends[t.ToLine][0]
		if !finite(a.X) || !finite(b.X) {
			continue
		}
		ln, err := plotter.NewLine(plotter.XYs{a, b})
		if err == nil {
			ln.LineStyle = draw.LineStyle{Color: grey, Width: 0.7, Dashes: []vg.Length{1, 2}}
			p.Add(ln)
		}
	}
	// Waypoints, named where there are few.
	var wpts plotter.XYs
	var wnames []string
	total := 0
	for _, l := range c.Plan.Lines {
		total += len(l.Waypoints)
	}
	for _, l := range c.Plan.Lines {
		for _, w := range l.Waypoints {
			if !finite(w.Lon) || !finite(w.Lat) {
				continue
			}
			lon := lonOf(w.Lon)
			add(lon, w.Lat)
			wpts = append(wpts, plotter.XY{X: lon, Y: w.Lat})
			if total <= maxWaypointLabels {
				wnames = append(wnames, w.Name)
			} else {
				wnames = append(wnames, "")
			}
		}
	}
	if len(wpts) > 0 {
		sc, err := plotter.NewScatter(wpts)
		if err == nil {
			sc.GlyphStyle = draw.GlyphStyle{Color: black, Radius: 2, Shape: draw.RingGlyph{}}
			p.Add(sc)
		}
		lb, err := plotter.NewLabels(plotter.XYLabels{XYs: wpts, Labels: wnames})
		if err == nil {
			labelStyle(sans, 6.5)(lb)
			lb.Offset = vg.Point{X: 3, Y: -9}
			p.Add(lb)
		}
	}
	if len(startPts) > 0 {
		lb, err := plotter.NewLabels(plotter.XYLabels{XYs: startPts, Labels: startNames})
		if err == nil {
			labelStyle(sansBold, 7.5)(lb)
			for k := range lb.TextStyle {
				lb.TextStyle[k].Color = okBlue
			}
			lb.Offset = vg.Point{X: -4, Y: 3}
			for k := range lb.TextStyle {
				lb.TextStyle[k].XAlign = draw.XRight
			}
			p.Add(lb)
		}
	}
	// Hazards.
	for hi, h := range c.Hazards {
		if !finite(h.Lon) || !finite(h.Lat) {
			continue
		}
		pt := plotter.XYs{{X: lonOf(h.Lon), Y: h.Lat}}
		add(pt[0].X, pt[0].Y)
		sc, err := plotter.NewScatter(pt)
		if err != nil {
			continue
		}
		sc.GlyphStyle = hazardGlyph(h.Kind)
		sc.GlyphStyle.Radius = 3.5
		p.Add(sc)
		lb, err := plotter.NewLabels(plotter.XYLabels{XYs: pt, Labels: []string{"H" + strconv.Itoa(hi+1)}})
		if err == nil {
			labelStyle(sansBold, 6.5)(lb)
			lb.Offset = vg.Point{X: 4, Y: 2}
			p.Add(lb)
		}
	}

	// Note under the map.
	note := style(sansIt, 7, grey)
	note.YAlign = draw.YBottom
	nr := 2
	for j, t := range []string{
		"Lines (L1, L2, …) through their samples on WGS84 geodesics; rings: waypoints;",
		"dotted: transits in sailing order; marks H1, H2, …: hazards (see the tables).",
	} {
		dc.FillText(note, vg.Point{X: dc.Min.X, Y: dc.Min.Y + vg.Length(nr-1-j)*9}, t)
	}
	area := dc
	area.Min.Y += vg.Length(nr)*9 + 4

	if !finite(lonMin) {
		lonMin, lonMax, latMin, latMax = -1, 1, -1, 1
		p.Title.Text = "No positions to draw"
		p.Title.TextStyle.Font = font.From(sansBold, 9)
	}
	// Pad, then widen the shorter side so one km is one length both ways at the middle latitude.
	padLon := math.Max(0.08*(lonMax-lonMin), 0.01)
	padLat := math.Max(0.08*(latMax-latMin), 0.01)
	lonMin, lonMax, latMin, latMax = lonMin-padLon, lonMax+padLon, math.Max(-90, latMin-padLat), math.Min(90, latMax+padLat)
	k := math.Max(math.Cos((latMin+latMax)/2*math.Pi/180), 0.05)
	set := func() {
		p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = lonMin, lonMax, latMin, latMax
	}
	set()
	for range 2 { // the data area depends on the tick labels, which depend on the ranges
		da := p.DataCanvas(area)
		wPt, hPt := float64(da.Max.X-da.Min.X), float64(da.Max.Y-da.Min.Y)
		if wPt <= 0 || hPt <= 0 {
			break
		}
		spanX, spanY := (lonMax-lonMin)*k, latMax-latMin
		if spanX/spanY < wPt/hPt { // too narrow: widen longitude
			grow := (spanY*wPt/hPt/k - (lonMax - lonMin)) / 2
			lonMin, lonMax = lonMin-grow, lonMax+grow
		} else {
			grow := (spanX*hPt/wPt - spanY) / 2
			latMin, latMax = latMin-grow, latMax+grow
		}
		set()
	}
	p.Draw(area)
}
