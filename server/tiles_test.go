package server

import (
	"bytes"
	"fmt"
	"image"
	"image/png"
	"math"
	"strings"
	"testing"

	"ridgeflank/colour"
	"ridgeflank/demobasin"
)

// swellTile is the zoom-6 tile over the demo swell centre and the pixel of the centre in it
// (XYZ tiling scheme of web mercator).
func swellTile() (z, x, y, px, py int) {
	z = 6
	n := float64(int(1) << z)
	clon, clat := demobasin.SwellCentreLon, demobasin.SwellCentreLat
	fx := (clon + 180) / 360 * n
	latR := clat * math.Pi / 180
	fy := (1 - math.Log(math.Tan(latR)+1/math.Cos(latR))/math.Pi) / 2 * n
	x, y = int(fx), int(fy)
	return z, x, y, int((fx - float64(x)) * TileSize), int((fy - float64(y)) * TileSize)
}

// decodeTile decodes a PNG tile as non-premultiplied RGBA.
func decodeTile(t *testing.T, r reply) *image.NRGBA {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(r.Body))
	if err != nil {
		t.Fatalf("%s: %v", r.Request.URL, err)
	}
	out := image.NewNRGBA(img.Bounds())
	for j := img.Bounds().Min.Y; j < img.Bounds().Max.Y; j++ {
		for i := img.Bounds().Min.X; i < img.Bounds().Max.X; i++ {
			out.Set(i, j, img.At(i, j))
		}
	}
	return out
}

// TestTileColourRange: range=min,max redraws a tile with the user's value range. The demo
// swell's residual is +400 m at its centre (demobasin.SwellAmplitudeM, the injected dome), so
// with ±200 m the centre pixel is the warm end of the ramp exactly (clamped), while the
// default ±1,500 m puts it at (400 + 1500)/3000 ≈ 0.63 of the ramp.
func TestTileColourRange(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	z, x, y, px, py := swellTile()
	base := fmt.Sprintf("/tiles/%s/residual_depth/%d/%d/%d.png", e.dataset, z, x, y)
	ramp, _ := colour.RampByID("residual")
	warmEnd := ramp.At(1)

	def := e.get(base)
	e.want(def, 200)
	ranged := e.get(base + "?range=-200,200")
	e.want(ranged, 200)
	if got := decodeTile(t, ranged).NRGBAAt(px, py); got != warmEnd {
		t.Errorf("swell centre with ±200 m: %s, want the warm end %s", colour.Hex(got), colour.Hex(warmEnd))
	}
	if got := decodeTile(t, def).NRGBAAt(px, py); got == warmEnd {
		t.Errorf("swell centre with the default ±1500 m is already the warm end %s", colour.Hex(got))
	}
	if h := ranged.Header.Get("Ridgeflank-Colour-Scale"); !strings.Contains(h, "min=-200;") || !strings.Contains(h, "max=200;") {
		t.Errorf("colour scale header %q does not carry the range", h)
	}
	if def.Header.Get("ETag") == ranged.Header.Get("ETag") {
		t.Errorf("the range did not change the ETag")
	}
	// A lopsided range on a diverging ramp is drawn symmetric: −50,200 draws as ±200.
	if a, b := e.get(base+"?range=-50,200"), ranged; !bytes.Equal(decodeTile(t, a).Pix, decodeTile(t, b).Pix) {
		t.Errorf("range −50,200 is not drawn as ±200")
	}

	for _, bad := range []string{"5", "a,b", "10,5", "0,0", "NaN,1", "0,1e9"} {
		t.Run("bad/"+bad, func(t *testing.T) {
			r := e.get(base + "?range=" + esc(bad))
			if r.StatusCode < 400 || r.StatusCode >= 500 {
				t.Fatalf("range=%s: status %d, want a 4xx problem", bad, r.StatusCode)
			}
			if m := r.json(t); m["code"] != CodeInvalidParameter {
				t.Errorf("range=%s: problem code %v, want %s", bad, m["code"], CodeInvalidParameter)
			}
		})
	}
}
