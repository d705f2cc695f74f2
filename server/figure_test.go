package server

import (
	"bytes"
	"encoding/base64"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"image/color"
	"image/png"
	"io"
	"math"
	"net/http/httptest"
	"net/url"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"ridgeflank/colour"
	"ridgeflank/evaluate"
)

const figBox = "-150,-35,-138,-24"

// A PNG figure is exactly width-px pixels wide (its physical width is width-px/dpi inches), its
// map pixels have the colour the colour scale gives for the value of their cell in the area
// answer, and the SVG and PDF forms carry the caution, the units and the graticule labels.
func TestFigure(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	base := "/api/collections/" + e.dataset + "/figure?bbox=" + figBox + "&parameter-name=residual_depth&model=psm"
	r := e.get(base + "&width-px=800&dpi=100")
	e.want(r, 200)
	img, err := png.Decode(bytes.NewReader(r.Body))
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != 800 || b.Dy() < 400 {
		t.Errorf("PNG is %d×%d, want 800 wide (8 in at 100 dpi)", b.Dx(), b.Dy())
	}
	if cd := r.Header.Get("Content-Disposition"); !strings.Contains(cd, e.dataset+"-residual_depth-psm.png") {
		t.Errorf("Content-Disposition %q", cd)
	}
	t.Run("pixels have the scale's colours", func(t *testing.T) {
		var x0, y0, x1, y1 int
		if _, err := fmt.Sscanf(r.Header.Get("Ridgeflank-Figure-Map"), "%d,%d,%d,%d", &x0, &y0, &x1, &y1); err != nil {
			t.Fatal(err)
		}
		var west, north, dx, dy float64
		var nx, ny int
		if _, err := fmt.Sscanf(r.Header.Get("Ridgeflank-Figure-Lattice"), "west=%g, north=%g, dx=%g, dy=%g, nx=%d, ny=%d", &west, &north, &dx, &dy, &nx, &ny); err != nil {
			t.Fatal(err)
		}
		poly := "POLYGON((-150 -35,-138 -35,-138 -24,-150 -24,-150 -35))"
		area := e.get(fmt.Sprintf("/api/collections/%s/area?coords=%s&parameter-name=residual_depth&model=psm&resolution-x=%g&resolution-y=%g",
			e.dataset, url.QueryEscape(poly), dx, dy)).json(t)
		ax := area["domain"].(map[string]any)["axes"].(map[string]any)
		if num(t, ax["x"].(map[string]any)["num"]) != float64(nx) || math.Abs(num(t, ax["x"].(map[string]any)["start"])-west) > 1e-9 ||
			num(t, ax["y"].(map[string]any)["num"]) != float64(ny) || math.Abs(num(t, ax["y"].(map[string]any)["start"])-north) > 1e-9 {
			t.Fatalf("area answer's lattice %v differs from the figure's %s", ax, r.Header.Get("Ridgeflank-Figure-Lattice"))
		}
		vals := area["ranges"].(map[string]any)["residual_depth"].(map[string]any)["values"].([]any)
		b, _ := colour.BindingFor("residual_depth")
		ramp, _ := colour.RampByID(b.Ramp)
		checked := 0
		// Cells off the 2° graticule lines, across the basin.
		for _, at := range [][2]float64{{-143.3, -29.3}, {-148.7, -25.1}, {-139.3, -33.7}, {-145.1, -26.9}} {
			col := int(math.Round((at[0] - west) / dx))
			row := int(math.Round((north - at[1]) / dy))
			v, ok := vals[row*nx+col].(float64)
			if !ok {
				continue
			}
			lon, lat := west+float64(col)*dx, north-float64(row)*dy
			px := x0 + int((lon-(-150))/12*float64(x1-x0))
			py := y0 + int((-24-lat)/11*float64(y1-y0))
			got := color.NRGBAModel.Convert(img.At(px, py)).(color.NRGBA)
			want := ramp.At(b.Position(v))
			// Tolerance: 3 of 255 per channel, the painter's 256-colour palette (common practice, no source).
			if d := maxChannelDiff(got, want); d > 3 {
				t.Errorf("pixel (%d,%d) for cell %.3f,%.3f = %.1f m is %v, the scale gives %v", px, py, lon, lat, v, got, want)
			}
			checked++
		}
		if checked < 3 {
			t.Fatalf("only %d cells with values checked", checked)
		}
	})
	t.Run("legend area has the scale's end colours", func(t *testing.T) {
		// The colour bar stands right of the map over the map's height: some column there is
		// the ramp's top colour just below the map's top edge and its bottom colour just above
		// the bottom edge (the bar runs from the range's maximum at the top to its minimum).
		var x0, y0, x1, y1 int
		if _, err := fmt.Sscanf(r.Header.Get("Ridgeflank-Figure-Map"), "%d,%d,%d,%d", &x0, &y0, &x1, &y1); err != nil {
			t.Fatal(err)
		}
		b, _ := colour.BindingFor("residual_depth")
		ramp, _ := colour.RampByID(b.Ramp)
		top, bottom := ramp.At(1), ramp.At(0)
		found := -1
		for x := x1 + 2; x < img.Bounds().Max.X && found < 0; x++ {
			at := func(y int) color.NRGBA { return color.NRGBAModel.Convert(img.At(x, y)).(color.NRGBA) }
			for d := 1; d <= 4 && found < 0; d++ {
				if maxChannelDiff(at(y0+d), top) <= 6 && maxChannelDiff(at(y1-d), bottom) <= 6 {
					found = x
				}
			}
		}
		if found < 0 {
			t.Errorf("no column right of the map (x > %d) runs from the scale's top colour %v to its bottom colour %v: no colour bar", x1, top, bottom)
		}
	})
	t.Run("svg", func(t *testing.T) {
		s := e.get(base + "&f=svg&width-px=1200&dpi=120")
		e.want(s, 200)
		text := svgText(t, s.Body)
		// Viewers keep an embedded image's aspect ratio (SVG's default preserveAspectRatio), so
		// every image must have the shape of the rectangle it fills (1 %, common practice).
		images := regexp.MustCompile(`<image [^>]*width="([0-9.]+)" height="([0-9.]+)" xlink:href="data:image/[a-z]+;base64,([^"]+)"`).FindAllSubmatch(s.Body, -1)
		if len(images) < 2 {
			t.Fatalf("%d images in the SVG, want the map and the colour bar", len(images))
		}
		for _, im := range images {
			w, _ := strconv.ParseFloat(string(im[1]), 64)
			h, _ := strconv.ParseFloat(string(im[2]), 64)
			raw, err := base64.StdEncoding.DecodeString(string(im[3]))
			if err != nil {
				t.Fatal(err)
			}
			cfg, err := png.DecodeConfig(bytes.NewReader(raw))
			if err != nil {
				t.Fatal(err)
			}
			if r := (w / h) / (float64(cfg.Width) / float64(cfg.Height)); math.Abs(r-1) > 0.01 {
				t.Errorf("image of %d×%d px fills %g×%g pt: aspect off by %.1f %%", cfg.Width, cfg.Height, w, h, 100*(r-1))
			}
		}
		for _, want := range []string{evaluate.Caution[:40], "Residual depth (m)", "positive means shallower than the model", "144°W", "30°S", "km", "psm"} {
			if !strings.Contains(text, want) {
				t.Errorf("SVG text lacks %q", want)
			}
		}
	})
	t.Run("pdf", func(t *testing.T) {
		p := e.get(base + "&f=pdf")
		e.want(p, 200)
		if !bytes.HasPrefix(p.Body, []byte("%PDF")) || p.Header.Get("Content-Type") != "application/pdf" {
			t.Errorf("PDF starts %q, type %q", p.Body[:8], p.Header.Get("Content-Type"))
		}
	})
	t.Run("bad sizes", func(t *testing.T) {
		wantProblem(t, e.get(base+"&width-px=9000"), 422, CodeLimitExceeded)
		wantProblem(t, e.get(base+"&dpi=2000"), 422, CodeLimitExceeded)
		wantProblem(t, e.get(base+"&dpi=0"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(base+"&width-px=200"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(base+"&width-px=wide"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(base+"&f=gif"), 400, CodeUnsupportedFormat)
		wantProblem(t, e.get("/api/collections/"+e.dataset+"/figure?parameter-name=residual_depth"), 400, CodeInvalidParameter)
		wantProblem(t, e.get("/api/collections/"+e.dataset+"/figure?bbox="+figBox+"&parameter-name=residual_depth,heat_flow"), 400, CodeInvalidParameter)
	})
}

// A box across the antimeridian (east < west) is drawn with continuous longitudes and labels
// on both sides of 180°.
func TestFigureAntimeridian(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	installGlobe(t, e)
	r := e.get("/api/collections/globe/figure?bbox=170,-20,-170,0&parameter-name=seafloor_age&f=svg&width-px=1000&dpi=100")
	e.want(r, 200)
	text := svgText(t, r.Body)
	for _, want := range []string{"176°E", "180°", "176°W", "10°S", "Seafloor age (Ma)"} {
		if !strings.Contains(text, want) {
			t.Errorf("SVG text lacks %q", want)
		}
	}
	p := e.get("/api/collections/globe/figure?bbox=170,-20,-170,0&parameter-name=seafloor_age&width-px=1000&dpi=100")
	e.want(p, 200)
	var x0, y0, x1, y1 int
	fmt.Sscanf(p.Header.Get("Ridgeflank-Figure-Map"), "%d,%d,%d,%d", &x0, &y0, &x1, &y1)
	img, err := png.Decode(bytes.NewReader(p.Body))
	if err != nil {
		t.Fatal(err)
	}
	// Ages are |latitude| (installGlobe); the pixel row at 10.5°S either side of 180° shows 10.5 Ma.
	b, _ := colour.BindingFor("seafloor_age")
	ramp, _ := colour.RampByID(b.Ramp)
	want := ramp.At(b.Position(10.5))
	py := y0 + int((0-(-10.5))/20*float64(y1-y0))
	for _, lon := range []float64{175.5, 184.5} {
		px := x0 + int((lon-170)/20*float64(x1-x0))
		if got := color.NRGBAModel.Convert(img.At(px, py)).(color.NRGBA); maxChannelDiff(got, want) > 3 {
			t.Errorf("pixel at %g° is %v, want %v", lon, got, want)
		}
	}
}

func maxChannelDiff(a, b color.NRGBA) int {
	d := 0
	for _, p := range [][2]uint8{{a.R, b.R}, {a.G, b.G}, {a.B, b.B}} {
		d = max(d, int(math.Abs(float64(p[0])-float64(p[1]))))
	}
	return d
}

// svgText parses an SVG as XML and returns its character data.
func svgText(t *testing.T, raw []byte) string {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(raw))
	var sb strings.Builder
	root := ""
	for {
		tok, err := dec.Token()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not XML: %v", err)
		}
		switch v := tok.(type) {
		case xml.StartElement:
			if root == "" {
				root = v.Name.Local
			}
		case xml.CharData:
			sb.Write(v)
			sb.WriteByte('\n')
		}
	}
	if root != "svg" {
		t.Fatalf("root element %q", root)
	}
	return sb.String()
}

// Region rasters carry what the figure states: title, parameter, units, sign convention, model
// and caution, read back by gdalinfo -json (GDAL's own reader).
func TestRasterMetadataLikeFigure(t *testing.T) {
	gi, err := exec.LookPath("gdalinfo")
	if err != nil {
		t.Skip("gdalinfo not installed")
	}
	e := newEnv(t, "sqlite", Config{})
	poly := url.QueryEscape("POLYGON((-145 -31,-142 -31,-142 -28,-145 -28,-145 -31))")
	for _, c := range []struct{ f, ext, prefix string }{{"COG", ".tif", ""}, {"NetCDF", ".nc", "NC_GLOBAL#"}} {
		t.Run(c.f, func(t *testing.T) {
			r := e.get("/api/collections/" + e.dataset + "/area?coords=" + poly + "&parameter-name=residual_depth&model=psm&f=" + c.f)
			e.want(r, 200)
			path := filepath.Join(t.TempDir(), "x"+c.ext)
			if err := os.WriteFile(path, r.Body, 0o644); err != nil {
				t.Fatal(err)
			}
			out, err := exec.Command(gi, "-json", path).Output()
			if err != nil {
				t.Fatal(err)
			}
			var info struct {
				Metadata map[string]map[string]string `json:"metadata"`
			}
			if err := json.Unmarshal(out, &info); err != nil {
				t.Fatal(err)
			}
			md := info.Metadata[""]
			for k, want := range map[string]string{
				"ridgeflank_title":           "Quillon Basin (SYNTHETIC): Residual depth (model psm)",
				"ridgeflank_parameter":       "residual_depth",
				"ridgeflank_units":           "m",
				"ridgeflank_sign_convention": evaluate.SignConvention("residual_depth"),
				"ridgeflank_model":           "psm",
				"ridgeflank_caution":         evaluate.Caution,
				"title":                      "Quillon Basin (SYNTHETIC): Residual depth (model psm)",
			} {
				if got := md[c.prefix+k]; got != want {
					t.Errorf("%s%s = %q, want %q", c.prefix, k, got, want)
				}
			}
		})
	}
}

// BenchmarkFigurePNG renders a 1600 × 1025 PNG (the box's shape sets the height) of
// the demo basin's residual depth through the handler.
func BenchmarkFigurePNG(b *testing.B) {
	e := newEnv(b, "sqlite", Config{})
	req := httptest.NewRequest("GET", "/api/collections/"+e.dataset+"/figure?bbox=-154,-34,-134,-24&parameter-name=residual_depth&width-px=1600&dpi=150", nil)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rec := httptest.NewRecorder()
		e.handler.ServeHTTP(rec, req)
		if rec.Code != 200 {
			b.Fatalf("status %d: %s", rec.Code, rec.Body.String())
		}
		if i == 0 {
			if cfg, err := png.DecodeConfig(rec.Body); err != nil || cfg.Width != 1600 || cfg.Height != 1025 {
				b.Fatalf("PNG %d×%d (%v), want 1600×1025", cfg.Width, cfg.Height, err)
			}
		}
	}
}
