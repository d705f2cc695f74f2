package geo

import (
	"fmt"
	"math"
	"testing"
)

// BilinearSampler gives exactly Grid.SampleBilinear's values (the reference: the same rule
// evaluated point by point), on a global grid across its seam and at the poles, on a regional
// grid outside its extent, and with no-data neighbours.
func TestBilinearSamplerEqualsSampleBilinear(t *testing.T) {
	global := NewGrid(36, 18, -175, 85, 10, 10, CellCentre)
	regional := NewGrid(20, 10, 100.25, 10.25, 0.5, 0.5, Node)
	for _, g := range []*Grid{global, regional} {
		for i := range g.Data {
			g.Data[i] = float32(math.Sin(float64(i)*0.37) * 1000)
			if i%17 == 0 {
				g.Data[i] = float32(math.NaN())
			}
		}
	}
	for name, g := range map[string]*Grid{"global": global, "regional": regional} {
		t.Run(name, func(t *testing.T) {
			var lons []float64
			for lon := -200.0; lon <= 370; lon += 3.7 {
				lons = append(lons, lon)
			}
			s := g.NewBilinearSampler(lons)
			dst := make([]float32, len(lons))
			for lat := -91.0; lat <= 91; lat += 2.9 {
				s.Row(lat, dst)
				for i, lon := range lons {
					want := g.SampleBilinear(lon, lat)
					if dst[i] != want && !(isNaN32(dst[i]) && isNaN32(want)) {
						t.Fatalf("%s (%g, %g): %v, SampleBilinear %v", fmt.Sprint(name), lon, lat, dst[i], want)
					}
				}
			}
		})
	}
}
