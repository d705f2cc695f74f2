package colour

import (
	"fmt"
	"image/color"
	"math"
	"sort"
)

// Kind says how a scale is read: sequential (low to high) or diverging (two
// directions away from a centre value).
type Kind string

// Scale kinds.
const (
	Sequential Kind = "sequential"
	Diverging  Kind = "diverging"
)

// Stop is one control colour of a ramp at a position in [0, 1].
type Stop struct {
	Position float64 `json:"position"`
	Colour   string  `json:"colour"` // sRGB hex, "#rrggbb"
}

// Ramp is a named colour ramp. Colours between stops are interpolated in the
// OKLab space (Ottosson 2020, "A perceptual color space for image
// processing"), so steps look even to the eye; every ramp's OKLab lightness is
// monotonic (sequential) or monotonic on each side of the centre (diverging),
// which keeps it readable for viewers with colour-vision deficiencies and in
// grey-scale print (the package tests check both properties).
type Ramp struct {
	ID          string `json:"id"`
	Kind        Kind   `json:"kind"`
	Description string `json:"description"`
	Stops       []Stop `json:"stops"`
	lab         []lab
	pal256      []color.NRGBA // Palette(256), made at start-up
}

// Binding ties a data parameter to a ramp and its default value range.
type Binding struct {
	Parameter string  `json:"parameter"`
	Ramp      string  `json:"ramp"`
	Min       float64 `json:"min"`
	Max       float64 `json:"max"`
	Centre    float64 `json:"centre"` // only meaningful for diverging ramps
	Units     string  `json:"units"`
	Label     string  `json:"label"`
}

// The ramps. These hex stops are ridgeflank's own choices; nothing else in the
// project defines colours for data.
var ramps = []*Ramp{
	{
		ID: "abyss", Kind: Sequential,
		Description: "dark blue through teal and green to pale yellow; for ages",
		Stops: []Stop{
			{0, "#15173f"}, {0.2, "#1f3f74"}, {0.4, "#1f6e8a"},
			{0.6, "#3a9c83"}, {0.8, "#8cc46e"}, {1, "#f2ea9e"},
		},
	},
	{
		ID: "fathom", Kind: Sequential,
		Description: "pale yellow (shallow) through green and teal to dark blue (deep); for depths, metres positive down, so deep water is dark",
		Stops: []Stop{
			{0, "#f2ea9e"}, {0.2, "#8cc46e"}, {0.4, "#3a9c83"},
			{0.6, "#1f6e8a"}, {0.8, "#1f3f74"}, {1, "#15173f"},
		},
	},
	{
		ID: "ember", Kind: Sequential,
		Description: "deep purple through red and orange to cream; for heat flow",
		Stops: []Stop{
			{0, "#220c33"}, {0.2, "#5a1a5a"}, {0.4, "#9a2f4f"},
			{0.6, "#d45c3b"}, {0.8, "#f0a04d"}, {1, "#fbefc6"},
		},
	},
	{
		ID: "strata", Kind: Sequential,
		Description: "dark brown to pale sand; for sediment and lithosphere thicknesses",
		Stops: []Stop{
			{0, "#fbf3dc"}, {0.25, "#e6cf98"}, {0.5, "#c39a5a"},
			{0.75, "#86602f"}, {1, "#3f2a14"},
		},
	},
	{
		// Stops placed in OKLab: lightness falling linearly from 0.96 to 0.32, chroma at most
		// 0.1, hue turning from 305° to 280° (violet), so it reads apart from the other ramps.
		ID: "spread", Kind: Sequential,
		Description: "pale lilac to deep indigo; for uncertainties (darker = less certain)",
		Stops: []Stop{
			{0, "#f4effa"}, {0.25, "#c2b7dc"}, {0.5, "#8d83bb"},
			{0.75, "#5a5492"}, {1, "#2b2a64"},
		},
	},
	{
		ID: "residual", Kind: Diverging,
		Description: "blue (deeper than the model) through pale grey (zero) to orange-brown (shallower than the model)",
		Stops: []Stop{
			{0, "#1346b8"}, {0.25, "#5a82c4"}, {0.5, "#f6f6f1"},
			{0.75, "#dc8f4f"}, {1, "#b0560a"},
		},
	},
}

// bindings give every data parameter of the API its ramp and default range.
// Ranges are common practice for ocean-basin maps, no source.
var bindings = []Binding{
	{"seafloor_age", "abyss", 0, 180, 0, "Ma", "Seafloor age"},
	{"observed_depth", "fathom", 0, 7000, 0, "m", "Observed depth"},
	{"sediment_thickness", "strata", 0, 3000, 0, "m", "Sediment thickness"},
	{"predicted_depth", "fathom", 2500, 6500, 0, "m", "Predicted depth (model estimate, not for navigation)"},
	{"heat_flow", "ember", 30, 300, 0, "mW/m²", "Surface heat flow"},
	{"thermal_thickness", "strata", 0, 130, 0, "km", "Thermal lithosphere thickness"},
	{"corrected_depth", "fathom", 2000, 7000, 0, "m", "Corrected depth"},
	{"residual_depth", "residual", -1500, 1500, 0, "m", "Residual depth (positive = shallower than the model)"},
	{"depth_600c", "strata", 0, 100, 0, "km", "Depth of the 600 °C isotherm"},
	// Uncertainty ranges suit age uncertainties of 1–5 Ma (common practice, no source).
	{"predicted_depth_uncertainty", "spread", 0, 300, 0, "m", "Predicted depth uncertainty from age uncertainty (1σ)"},
	{"heat_flow_uncertainty", "spread", 0, 50, 0, "mW/m²", "Heat flow uncertainty from age uncertainty (1σ)"},
	{"thermal_thickness_uncertainty", "spread", 0, 20, 0, "km", "Thermal thickness uncertainty from age uncertainty (1σ)"},
	{"residual_depth_uncertainty", "spread", 0, 300, 0, "m", "Residual depth uncertainty from age uncertainty (1σ)"},
	{"ridge_push", "ember", 0, 5e12, 0, "N/m", "Ridge push per metre of ridge"},
}

func init() {
	for _, r := range ramps {
		r.lab = make([]lab, len(r.Stops))
		for i, s := range r.Stops {
			c, err := ParseHex(s.Colour)
			if err != nil {
				panic(fmt.Sprintf("colour: ramp %s: %v", r.ID, err))
			}
			r.lab[i] = toOKLab(c)
		}
		r.pal256 = r.Palette(256)
	}
}

// Ramps returns every ramp.
func Ramps() []*Ramp { return ramps }

// RampByID returns the named ramp.
func RampByID(id string) (*Ramp, bool) {
	for _, r := range ramps {
		if r.ID == id {
			return r, true
		}
	}
	return nil, false
}

// Bindings returns the parameter-to-ramp bindings.
func Bindings() []Binding { return bindings }

// BindingFor returns the binding of a data parameter.
func BindingFor(parameter string) (Binding, bool) {
	for _, b := range bindings {
		if b.Parameter == parameter {
			return b, true
		}
	}
	return Binding{}, false
}

// At returns the colour at position t in [0, 1] (clamped).
func (r *Ramp) At(t float64) color.NRGBA {
	if math.IsNaN(t) {
		return color.NRGBA{}
	}
	t = math.Max(0, math.Min(1, t))
	i := sort.Search(len(r.Stops), func(i int) bool { return r.Stops[i].Position >= t })
	if i == 0 {
		return fromOKLab(r.lab[0])
	}
	if i >= len(r.Stops) {
		return fromOKLab(r.lab[len(r.lab)-1])
	}
	a, b := r.Stops[i-1], r.Stops[i]
	f := (t - a.Position) / (b.Position - a.Position)
	la, lb := r.lab[i-1], r.lab[i]
	return fromOKLab(lab{la.L + f*(lb.L-la.L), la.A + f*(lb.A-la.A), la.B + f*(lb.B-la.B)})
}

// Palette256 is Palette(256) of a ramp of this package, made once at start-up (callers must
// not change it).
func (r *Ramp) Palette256() []color.NRGBA {
	if r.pal256 == nil {
		return r.Palette(256)
	}
	return r.pal256
}

// Palette samples the ramp into n colours (n ≥ 2), evenly spaced from 0 to 1.
func (r *Ramp) Palette(n int) []color.NRGBA {
	if n < 2 {
		n = 2
	}
	out := make([]color.NRGBA, n)
	for i := range out {
		out[i] = r.At(float64(i) / float64(n-1))
	}
	return out
}

// Position maps a data value to [0, 1] for the binding's range: (v − lo)/span with Linear's lo
// and span (0.5 for an empty range, NaN for NaN). Diverging ramps place Centre at 0.5 and
// scale both sides by the larger half-range, so equal distances from the centre get equal
// colour strength.
func (b Binding) Position(v float64) float64 {
	if math.IsNaN(v) {
		return math.NaN()
	}
	lo, span := b.Linear()
	if !(span > 0) {
		return 0.5
	}
	return (v - lo) / span
}

// Linear is the affine map behind Position, for loops that colour many values: the value at
// position 0 and the width of the range. Diverging ramps span Centre ± the larger half-range.
func (b Binding) Linear() (lo, span float64) {
	if r, ok := RampByID(b.Ramp); ok && r.Kind == Diverging {
		half := math.Max(b.Max-b.Centre, b.Centre-b.Min)
		return b.Centre - half, 2 * half
	}
	return b.Min, b.Max - b.Min
}

// Hex formats a colour as "#rrggbb".
func Hex(c color.NRGBA) string { return fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B) }

// ParseHex reads "#rrggbb".
func ParseHex(s string) (color.NRGBA, error) {
	var c color.NRGBA
	if len(s) != 7 || s[0] != '#' {
		return c, fmt.Errorf("colour %q is not #rrggbb", s)
	}
	if _, err := fmt.Sscanf(s[1:], "%02x%02x%02x", &c.R, &c.G, &c.B); err != nil {
		return c, fmt.Errorf("colour %q is not #rrggbb: %v", s, err)
	}
	c.A = 255
	return c, nil
}

// Document is the JSON form served at /api/colour-scales: the ramps with
// their stops and a 32-colour sampling (so a legend can draw them without
// OKLab maths), and the parameter bindings.
type Document struct {
	Ramps    []RampJSON `json:"ramps"`
	Bindings []Binding  `json:"bindings"`
	// Background is the map's colour where there is no grid (MapBackground).
	Background string `json:"background"`
	// NoData says how cells of a grid without a value are drawn (hatch lines, see NoData).
	NoData NoDataJSON `json:"no_data"`
	Note   string     `json:"note"`
}

// NoDataJSON describes the no-data hatch in the Document.
type NoDataJSON struct {
	Pattern     string `json:"pattern"` // "hatch": diagonal lines, transparent between them
	Colour      string `json:"colour"`
	SpacingPx   int    `json:"spacing_px"`
	LineWidthPx int    `json:"line_width_px"`
}

// RampJSON is one ramp in the Document.
type RampJSON struct {
	Ramp
	Samples []string `json:"samples"`
}

// NewDocument builds the Document.
func NewDocument() Document {
	d := Document{
		Bindings:   bindings,
		Background: MapBackground,
		NoData:     NoDataJSON{Pattern: "hatch", Colour: NoDataColour, SpacingPx: NoDataSpacingPx, LineWidthPx: NoDataLineWidthPx},
		Note:       "Colours between stops are interpolated in OKLab; samples are evenly spaced from 0 to 1. Diverging ramps put the binding's centre at 0.5. Tiles take range=min,max to draw another value range (diverging ramps: centre ± the larger half-range).",
	}
	for _, r := range ramps {
		rj := RampJSON{Ramp: *r}
		rj.lab, rj.pal256 = nil, nil
		for _, c := range r.Palette(32) {
			rj.Samples = append(rj.Samples, Hex(c))
		}
		d.Ramps = append(d.Ramps, rj)
	}
	return d
}
