package report

import (
	"fmt"
	"strconv"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"ridgeflank/survey"
)

// summaryPage: settings and provenance (left), the plan map (right), totals and description.
func (d *doc) summaryPage(dc draw.Canvas, body vg.Rectangle) {
	const gap = 16
	colW := (body.Max.X-body.Min.X)/2 - gap/2
	x0, xr := body.Min.X, body.Min.X+colW+gap
	y := heading(dc, x0, body.Max.Y, "Settings")
	y = kv(dc, x0, y, colW, 0.55, settingsRows(d.c.Plan.Settings))
	y -= 8
	y = heading(dc, x0, y, "Provenance")
	y = kv(dc, x0, y, colW, 0.3, d.provenanceRows())

	my := heading(dc, xr, body.Max.Y, "Plan map")
	side := colW
	if side > my-y {
		side = my - y
	}
	mapArea := draw.Crop(dc, 0, 0, 0, 0)
	mapArea.Rectangle = vg.Rectangle{Min: vg.Point{X: xr, Y: my - side}, Max: vg.Point{X: xr + colW, Y: my}}
	d.drawMap(mapArea)
	if my-side < y {
		y = my - side
	}

	y -= 14
	y = heading(dc, x0, y, "Totals")
	rows := d.totalsRows()
	half := (len(rows) + 1) / 2
	yl := kv(dc, x0, y, colW, 0.62, rows[:half])
	kv(dc, xr, y, colW, 0.62, rows[half:])
	y = yl

	if desc := d.c.Plan.Description; desc != "" {
		y -= 8
		y = heading(dc, x0, y, "Description")
		st := style(sans, bodySize, black)
		lines := wrap(st, desc, body.Max.X-body.Min.X)
		max := int((y - body.Min.Y) / rowH)
		if len(lines) > max && max > 0 {
			lines = lines[:max]
			lines[max-1] = fit(st, lines[max-1]+" …", body.Max.X-body.Min.X)
		}
		for _, l := range lines {
			if y-rowH < body.Min.Y {
				break
			}
			dc.FillText(st, vg.Point{X: x0, Y: y}, l)
			y -= rowH
		}
	}
}

func settingsRows(s survey.Settings) [][2]string {
	orDefault := func(v string) string {
		if v == "" {
			return "service default"
		}
		return v
	}
	rows := [][2]string{
		{"Dataset", s.Dataset},
		{"Cooling model", orDefault(s.Model)},
		{"Sediment compaction", orDefault(s.Sediment)},
		{"Speed on line (kn)", num(s.SpeedOnLineKn, 1)},
		{"Speed in transit (kn)", num(s.SpeedTransitKn, 1)},
	}
	if s.SwathWidthM > 0 {
		rows = append(rows, [2]string{"Swath width on the seafloor (m)", num(s.SwathWidthM, 0)})
	} else {
		rows = append(rows, [2]string{"Swath opening angle, total (°)", num(s.SwathAngleDeg, 1)})
	}
	safety := num(s.SafetyDepthM, 0)
	if s.SafetyDepthM == 0 {
		safety = "0 (not tested)"
	}
	spacing := num(s.SpacingKm, 3)
	if s.SpacingKm == 0 {
		spacing = "the grid's spacing"
	}
	rows = append(rows,
		[2]string{"Overlap of adjacent swaths (%)", num(s.OverlapPct, 0)},
		[2]string{"Safety depth (m)", safety},
		[2]string{"Sample spacing along track (km)", spacing},
		[2]string{"Transducer depth (m)", num(s.TransducerM, 1)},
	)
	if n := len(s.SoundProfile); n > 0 {
		p := s.SoundProfile
		rows = append(rows, [2]string{"Sound-speed profile levels", strconv.Itoa(n)},
			[2]string{"Sound-speed profile depths (m)", num(p[0].DepthM, 0) + " to " + num(p[n-1].DepthM, 0)})
	} else {
		ptr := func(v *float64, prec int) string {
			if v == nil {
				return "service default"
			}
			return num(*v, prec)
		}
		rows = append(rows, [2]string{"Water temperature (°C)", ptr(s.WaterTemperatureC, 1)},
			[2]string{"Salinity (PSU)", ptr(s.SalinityPSU, 1)})
	}
	return append(rows,
		[2]string{"Seamount height threshold (m)", num(s.SeamountM, 0)},
		[2]string{"Steep-slope threshold (°)", num(s.MaxSlopeDeg, 1)},
	)
}

func (d *doc) provenanceRows() [][2]string {
	p := d.o.Provenance
	rows := [][2]string{
		{"Generated (UTC)", p.Generated.Format("2006-01-02T15:04:05Z")},
	}
	add := func(k, v string) {
		if v != "" {
			rows = append(rows, [2]string{k, v})
		}
	}
	add("Software", p.Software)
	add("Dataset", p.Dataset)
	add("Model", p.Model)
	add("Sediment", p.Sediment)
	for _, g := range p.Grids {
		add("Grid", g)
	}
	if id := d.c.Plan.ID; id != "" {
		add("Plan id", fmt.Sprintf("%s (version %d)", id, d.c.Plan.Version))
	}
	return rows
}

func (d *doc) totalsRows() [][2]string {
	t := d.c.Totals
	return [][2]string{
		{"Lines", strconv.Itoa(len(d.c.Lines))},
		{"Length on line (km)", num(t.LengthKm, 2)},
		{"Length on line (nmi)", num(t.LengthNmi, 2)},
		{"Transit (km)", num(t.TransitKm, 2)},
		{"Transit (nmi)", num(t.TransitNmi, 2)},
		{"Area covered (km²)", num(t.AreaKm2, 1)},
		{"Hazards", strconv.Itoa(len(d.c.Hazards))},
		{"Coverage gaps", strconv.Itoa(len(d.c.Gaps))},
		{"Time on line (h)", num(t.TimeOnLineH, 2) + "  (" + hoursDHM(t.TimeOnLineH) + ")"},
		{"Time in transit (h)", num(t.TimeInTransitH, 2) + "  (" + hoursDHM(t.TimeInTransitH) + ")"},
		{"Total time (h)", num(t.TimeTotalH, 2) + "  (" + hoursDHM(t.TimeTotalH) + ")"},
		{"Expected depth, shallowest (m)", num(t.MinDepthM, 0)},
		{"Expected depth, mean (m)", num(t.MeanDepthM, 0)},
		{"Expected depth, deepest (m)", num(t.MaxDepthM, 0)},
	}
}
