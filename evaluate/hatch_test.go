package evaluate

import (
	"image/color"
	"math"
	"testing"

	"ridgeflank/colour"
)

// TestTileHatchNoData: in one tile row, a grid cell without a value gets the no-data hatch on
// the lines of colour.NoDataAt, a valued cell keeps its ramp colour, and a pixel outside the
// grid (column −1) stays transparent.
func TestTileHatchNoData(t *testing.T) {
	b, _ := colour.BindingFor("seafloor_age")
	p := NewPaint(b)
	nan := float32(math.NaN())
	vals := []float32{nan, 90}
	nd := color.NRGBA{1, 2, 3, 255}
	cases := []struct {
		name string
		col  int
		x0   int
		want func(x int) color.NRGBA
	}{
		{"no data", 0, 512, func(x int) color.NRGBA {
			if colour.NoDataAt(x, 7) {
				return nd
			}
			return color.NRGBA{}
		}},
		{"valued", 1, 512, func(int) color.NRGBA { r, _ := colour.RampByID(b.Ramp); return r.Palette256()[128] }},
		{"outside the grid", -1, 512, func(int) color.NRGBA { return color.NRGBA{} }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			const n = 12
			cols := make([]int, n)
			for i := range cols {
				cols[i] = c.col
			}
			pix := make([]uint8, 4*n)
			p.Row(pix, vals, cols)
			hatchNoData(pix, cols, c.x0, 7, nd)
			lines := 0
			for i := 0; i < n; i++ {
				got := color.NRGBA{pix[4*i], pix[4*i+1], pix[4*i+2], pix[4*i+3]}
				if want := c.want(c.x0 + i); got != want {
					t.Errorf("pixel %d: %v, want %v", i, got, want)
				}
				if got == nd {
					lines++
				}
			}
			if c.name == "no data" && lines != n/colour.NoDataSpacingPx*colour.NoDataLineWidthPx {
				t.Errorf("%d hatch pixels in %d, want %d", lines, n, n/colour.NoDataSpacingPx*colour.NoDataLineWidthPx)
			}
		})
	}
}
