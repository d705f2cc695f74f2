package colour

import (
	"encoding/json"
	"fmt"
	"image/color"
	"math"
	"testing"
)

// OKLab reference values: CSS Color Module Level 4, §9 (OKLab/OKLCH examples):
// sRGB red = oklch(62.8% 0.2577 29.23), sRGB blue = oklch(45.2% 0.313 264.05)
// (from memory of the spec's examples), white = L 1, a = b = 0 (by
// construction of OKLab, Ottosson 2020).
func TestOKLabReference(t *testing.T) {
	cases := []struct {
		name        string
		hex         string
		L, C, hDeg  float64
		tolL, tolCh float64
	}{
		{"white", "#ffffff", 1.0, 0, 0, 1e-3, 1e-3},
		{"red", "#ff0000", 0.628, 0.2577, 29.23, 2e-3, 0.3},
		{"blue", "#0000ff", 0.452, 0.313, 264.05, 2e-3, 0.3},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			col, err := ParseHex(c.hex)
			if err != nil {
				t.Fatal(err)
			}
			l := toOKLab(col)
			chroma := math.Hypot(l.A, l.B)
			if math.Abs(l.L-c.L) > c.tolL {
				t.Errorf("L = %.4f, want %.4f", l.L, c.L)
			}
			if math.Abs(chroma-c.C) > c.tolL*2 {
				t.Errorf("C = %.4f, want %.4f", chroma, c.C)
			}
			if c.C > 0 {
				h := math.Mod(math.Atan2(l.B, l.A)*180/math.Pi+360, 360)
				if math.Abs(h-c.hDeg) > c.tolCh {
					t.Errorf("h = %.2f, want %.2f", h, c.hDeg)
				}
			}
			back := fromOKLab(l)
			if back != col {
				t.Errorf("round trip %v -> %v", col, back)
			}
		})
	}
}

// Machado, Oliveira & Fernandes (2009), "A physiologically-based model for
// simulation of color vision deficiency", severity 1.0 matrices on linear RGB
// (from memory).
var cvd = map[string][3][3]float64{
	"protanopia":   {{0.152286, 1.052583, -0.204868}, {0.114503, 0.786281, 0.099216}, {-0.003882, -0.048116, 1.051998}},
	"deuteranopia": {{0.367322, 0.860646, -0.227968}, {0.280085, 0.672501, 0.047413}, {-0.011820, 0.042940, 0.968881}},
	"tritanopia":   {{1.255528, -0.076749, -0.178779}, {-0.078411, 0.930809, 0.147602}, {0.004733, 0.691367, 0.303900}},
	"none":         {{1, 0, 0}, {0, 1, 0}, {0, 0, 1}},
}

func simulate(c color.NRGBA, m [3][3]float64) lab {
	in := [3]float64{srgbToLinear(float64(c.R) / 255), srgbToLinear(float64(c.G) / 255), srgbToLinear(float64(c.B) / 255)}
	var out [3]float64
	for i := range 3 {
		for j := range 3 {
			out[i] += m[i][j] * in[j]
		}
	}
	to8 := func(v float64) uint8 { return uint8(math.Round(linearToSRGB(math.Max(0, math.Min(1, v))) * 255)) }
	return toOKLab(color.NRGBA{to8(out[0]), to8(out[1]), to8(out[2]), 255})
}

func dist(a, b lab) float64 {
	return math.Sqrt((a.L-b.L)*(a.L-b.L) + (a.A-b.A)*(a.A-b.A) + (a.B-b.B)*(a.B-b.B))
}

// Sequential ramps must stay monotonic in lightness and keep neighbouring
// steps apart under simulated colour-vision deficiency; diverging ramps must
// peak in lightness at the centre and keep their two ends apart. Thresholds
// (0.02 per 1/15 step, 0.25 between diverging ends) are common practice, no source.
func TestRampsReadableUnderCVD(t *testing.T) {
	for _, r := range Ramps() {
		for name, m := range cvd {
			t.Run(r.ID+"/"+name, func(t *testing.T) {
				pal := r.Palette(16)
				labs := make([]lab, len(pal))
				for i, c := range pal {
					labs[i] = simulate(c, m)
				}
				for i := 1; i < len(labs); i++ {
					if d := dist(labs[i], labs[i-1]); d < 0.02 {
						t.Errorf("steps %d and %d only %.3f apart", i-1, i, d)
					}
				}
				switch r.Kind {
				case Sequential:
					sign := math.Copysign(1, labs[len(labs)-1].L-labs[0].L)
					for i := 1; i < len(labs); i++ {
						if (labs[i].L-labs[i-1].L)*sign <= 0 {
							t.Errorf("lightness not monotonic at step %d: %.3f -> %.3f", i, labs[i-1].L, labs[i].L)
						}
					}
				case Diverging:
					mid := r.At(0.5)
					lm := simulate(mid, m).L
					for i, l := range labs {
						if l.L > lm+0.01 {
							t.Errorf("step %d lighter (%.3f) than the centre (%.3f)", i, l.L, lm)
						}
					}
					if d := dist(labs[0], labs[len(labs)-1]); d < 0.25 {
						t.Errorf("ends only %.3f apart", d)
					}
				}
			})
		}
	}
}

func TestBindingsCoverEveryParameter(t *testing.T) {
	want := []string{"seafloor_age", "observed_depth", "sediment_thickness", "predicted_depth", "heat_flow",
		"thermal_thickness", "corrected_depth", "residual_depth", "depth_600c",
		"predicted_depth_uncertainty", "heat_flow_uncertainty", "thermal_thickness_uncertainty", "residual_depth_uncertainty", "ridge_push"}
	for _, p := range want {
		b, ok := BindingFor(p)
		if !ok {
			t.Errorf("no binding for %s", p)
			continue
		}
		if _, ok := RampByID(b.Ramp); !ok {
			t.Errorf("%s: unknown ramp %s", p, b.Ramp)
		}
	}
	b, _ := BindingFor("residual_depth")
	if got := b.Position(0); got != 0.5 {
		t.Errorf("residual 0 m at %.3f, want centre 0.5", got)
	}
	if got := b.Position(b.Max); got != 1 {
		t.Errorf("residual max at %.3f, want 1", got)
	}
}

func TestDocumentJSON(t *testing.T) {
	raw, err := json.Marshal(NewDocument())
	if err != nil {
		t.Fatal(err)
	}
	var d struct {
		Ramps []struct {
			ID      string   `json:"id"`
			Samples []string `json:"samples"`
			Stops   []Stop   `json:"stops"`
		} `json:"ramps"`
	}
	if err := json.Unmarshal(raw, &d); err != nil {
		t.Fatal(err)
	}
	if len(d.Ramps) != len(Ramps()) {
		t.Fatalf("%d ramps in JSON, want %d", len(d.Ramps), len(Ramps()))
	}
	for _, r := range d.Ramps {
		if len(r.Samples) != 32 || r.Samples[0] != r.Stops[0].Colour {
			t.Errorf("%s: samples %v do not start at the first stop %s", r.ID, r.Samples[:1], r.Stops[0].Colour)
		}
	}
}

func ExampleBinding_Position() {
	b, _ := BindingFor("residual_depth")
	r, _ := RampByID(b.Ramp)
	fmt.Println(Hex(r.At(b.Position(0))))
	// Output: #f6f6f1
}

// TestZeroColourContrast checks that "no anomaly" (the centre of every diverging ramp) cannot
// be mistaken for the map background or for no data: the WCAG 2.1 contrast ratio (W3C, Web
// Content Accessibility Guidelines 2.1, definitions of "relative luminance" and "contrast
// ratio"; success criterion 1.4.11 Non-text Contrast asks ≥ 3:1 for graphical objects) between
// them must be at least 3. The ratio itself is checked first against the worked values of the
// definition: black on white 21:1, a colour on itself 1:1, and #777777 on white 4.48:1
// (WCAG's own example of a grey that narrowly fails 4.5:1; from memory, tolerance 0.01).
func TestZeroColourContrast(t *testing.T) {
	hex := func(s string) color.NRGBA {
		c, err := ParseHex(s)
		if err != nil {
			t.Fatal(err)
		}
		return c
	}
	ref := []struct {
		name string
		a, b string
		want float64
	}{
		{"black on white", "#000000", "#ffffff", 21},
		{"white on white", "#ffffff", "#ffffff", 1},
		{"#777777 on white", "#777777", "#ffffff", 4.48},
	}
	for _, c := range ref {
		t.Run("reference/"+c.name, func(t *testing.T) {
			if got := ContrastRatio(hex(c.a), hex(c.b)); math.Abs(got-c.want) > 0.01 {
				t.Errorf("contrast %.3f, want %.2f", got, c.want)
			}
		})
	}
	const minContrast = 3.0 // WCAG 2.1 SC 1.4.11
	bg, nd := hex(MapBackground), hex(NoDataColour)
	for _, r := range Ramps() {
		if r.Kind != Diverging {
			continue
		}
		zero := r.At(0.5)
		t.Run(r.ID+"/zero-vs-background", func(t *testing.T) {
			if got := ContrastRatio(zero, bg); got < minContrast {
				t.Errorf("zero %s on background %s: %.2f:1, want ≥ %g:1", Hex(zero), MapBackground, got, minContrast)
			}
		})
		t.Run(r.ID+"/zero-vs-no-data", func(t *testing.T) {
			if got := ContrastRatio(zero, nd); got < minContrast {
				t.Errorf("zero %s against no-data lines %s: %.2f:1, want ≥ %g:1", Hex(zero), NoDataColour, got, minContrast)
			}
		})
	}
	// The old pair, measured in the issue at 1.01:1, must fail this test.
	if got := ContrastRatio(hex("#efefea"), hex("#e8eef3")); got > 1.05 {
		t.Errorf("old zero on old background %.3f, the issue measured 1.01", got)
	}
}

// TestDepthRampsDarkIsDeep: depths are metres positive down, and a bathymetric map reads dark
// as deep (common practice, no source), so every depth parameter's ramp must get darker (lower
// OKLab L) as the value grows.
func TestDepthRampsDarkIsDeep(t *testing.T) {
	for _, p := range []string{"observed_depth", "predicted_depth", "corrected_depth"} {
		t.Run(p, func(t *testing.T) {
			b, _ := BindingFor(p)
			r, _ := RampByID(b.Ramp)
			shallow, deep := toOKLab(r.At(b.Position(b.Min))), toOKLab(r.At(b.Position(b.Max)))
			if !(deep.L < shallow.L-0.3) {
				t.Errorf("L at %g m = %.3f, at %g m = %.3f: deep must be darker by > 0.3", b.Min, shallow.L, b.Max, deep.L)
			}
		})
	}
}

func TestWithRange(t *testing.T) {
	res, _ := BindingFor("residual_depth")
	age, _ := BindingFor("seafloor_age")
	cases := []struct {
		name    string
		b       Binding
		lo, hi  float64
		v, want float64 // Position(v) after the change
		ok      bool
	}{
		// Worked by hand: centre 0, half-range max(150, 200) = 200, so −200 → 0, +200 → 1, 100 → 0.75.
		{"residual lopsided drawn symmetric", res, -150, 200, 100, 0.75, true},
		{"residual lower end", res, -150, 200, -200, 0, true},
		{"age 20 to 120 Ma", age, 20, 120, 70, 0.5, true},
		{"reversed", age, 120, 20, 0, 0, false},
		{"empty", age, 5, 5, 0, 0, false},
		{"not finite", age, math.Inf(-1), 5, 0, 0, false},
		{"NaN", age, math.NaN(), 5, 0, 0, false},
		{"too large", age, 0, 2e7, 0, 0, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			b, err := c.b.WithRange(c.lo, c.hi)
			if (err == nil) != c.ok {
				t.Fatalf("err = %v, want ok = %v", err, c.ok)
			}
			if c.ok {
				if got := b.Position(c.v); math.Abs(got-c.want) > 1e-12 {
					t.Errorf("Position(%g) = %g, want %g", c.v, got, c.want)
				}
			}
		})
	}
}

func TestNoDataHatch(t *testing.T) {
	// Along any row, exactly NoDataLineWidthPx of every NoDataSpacingPx pixels are on a line,
	// and the pattern continues across a tile edge (x = 255 → 256) and into negative x.
	for _, y := range []int{0, 3, 255, 256} {
		on := 0
		for x := -NoDataSpacingPx * 10; x < NoDataSpacingPx*50; x++ {
			if NoDataAt(x, y) {
				on++
			}
		}
		if want := 60 * NoDataLineWidthPx; on != want {
			t.Errorf("row %d: %d pixels on lines, want %d", y, on, want)
		}
	}
}

// TestRampsPerceptuallyEven: equal steps of data must look like roughly equal steps of colour.
// Along each ramp sampled at 33 even positions, the largest OKLab distance between
// neighbours (Euclidean ΔE in OKLab, Ottosson 2020) may be at most 3 times the smallest
// (common practice, no source; the ramps measure 1.4 to 2.5).
func TestRampsPerceptuallyEven(t *testing.T) {
	for _, r := range Ramps() {
		t.Run(r.ID, func(t *testing.T) {
			p := r.Palette(33)
			lo, hi := math.Inf(1), 0.0
			for i := 1; i < len(p); i++ {
				d := dist(toOKLab(p[i]), toOKLab(p[i-1]))
				lo, hi = math.Min(lo, d), math.Max(hi, d)
			}
			if hi > 3*lo {
				t.Errorf("OKLab steps from %.4f to %.4f: ratio %.2f > 3", lo, hi, hi/lo)
			}
		})
	}
}
