package geo

import (
	"errors"
	"math"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
)

// TestErrorsAreFaults checks that bad input and limits give *fault.Error values with the kind,
// field and limit the HTTP and command-line layers map to answers, and that the package's
// sentinel errors stay in the chain for errors.Is.
func TestErrorsAreFaults(t *testing.T) {
	global := NewGrid(360, 180, -179.5, 89.5, 1, 1, CellCentre)
	regional := NewGrid(10, 10, 0.5, 9.5, 1, 1, CellCentre)
	threeCSV := []byte("lat,lon\n0,0\n0,1\n0,2\n")
	threeGPX := []byte(`<gpx version="1.1"><rte><rtept lat="0" lon="0"/><rtept lat="0" lon="1"/><rtept lat="0" lon="2"/></rte></gpx>`)
	threeLine := []byte(`{"type":"LineString","coordinates":[[0,0],[1,0],[2,0]]}`)
	threePoints := []byte(`{"type":"FeatureCollection","features":[` +
		`{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[0,0]}},` +
		`{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[1,0]}},` +
		`{"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[2,0]}}]}`)
	// Samples of a track (0,0)→(1,0)→(1,1) on a sphere of radius 6371 km at 1 km spacing: each
	// leg is a 1° great-circle arc, s = R·θ = 111.19 km (arc length of a circle), so
	// ⌈111.19⌉ = 112 steps per leg and 1 + 2·112 = 225 samples.
	sphere := Sphere{RadiusM: 6_371_000}
	legKm := 6371 * math.Pi / 180
	wantSamples := int64(1 + 2*math.Ceil(legKm))
	cases := []struct {
		name      string
		err       func() error
		kind      fault.Kind
		field     string
		cause     error
		limitName string
		limit     int64
		asked     int64
	}{
		{"CSV bad latitude", func() error { _, err := ParseTrack([]byte("lat,lon\nx,0\n1,1\n"), "csv", 0); return err },
			fault.InvalidTrack, TrackField, ErrInvalidTrack, "", 0, 0},
		{"unknown track format", func() error { _, err := ParseTrack(threeCSV, "kml", 0); return err },
			fault.InvalidTrack, TrackField, ErrInvalidTrack, "", 0, 0},
		{"CSV waypoint limit", func() error { _, err := ParseTrack(threeCSV, "", 2); return err },
			fault.LimitExceeded, TrackField, ErrInvalidTrack, "max_vertices", 2, 3},
		{"GPX waypoint limit", func() error { _, err := ParseTrack(threeGPX, "", 2); return err },
			fault.LimitExceeded, TrackField, ErrInvalidTrack, "max_vertices", 2, 3},
		{"GeoJSON LineString waypoint limit", func() error { _, err := ParseTrack(threeLine, "", 2); return err },
			fault.LimitExceeded, TrackField, ErrInvalidTrack, "max_vertices", 2, 3},
		{"GeoJSON Points waypoint limit", func() error { _, err := ParseTrack(threePoints, "", 2); return err },
			fault.LimitExceeded, TrackField, ErrInvalidTrack, "max_vertices", 2, 3},
		{"one waypoint", func() error { _, err := ValidateWaypoints([]Waypoint{{}}, 0); return err },
			fault.InvalidTrack, TrackField, ErrInvalidTrack, "", 0, 0},
		{"zero sample spacing", func() error {
			_, err := Densify(sphere, []Waypoint{{0, 0, ""}, {1, 0, ""}}, 0, 0)
			return err
		}, fault.InvalidParameter, "spacing-km", ErrInvalidTrack, "", 0, 0},
		{"sample limit", func() error {
			_, err := Densify(sphere, []Waypoint{{0, 0, ""}, {1, 0, ""}, {1, 1, ""}}, 1000, 100)
			return err
		}, fault.LimitExceeded, "spacing-km", ErrInvalidTrack, "max_track_samples", 100, wantSamples},
		{"region vertex limit", func() error {
			_, err := ParseRegion([]byte(`{"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1],[0,0]]]}`), 4)
			return err
		}, fault.LimitExceeded, RegionField, ErrInvalidRegion, "max_vertices", 4, 5},
		{"region not GeoJSON", func() error { _, err := ParseRegion([]byte(`{`), 0); return err },
			fault.InvalidRegion, RegionField, ErrInvalidRegion, "", 0, 0},
		{"window outside a regional grid", func() error {
			_, err := regional.Window(orb.Bound{Min: orb.Point{50, 50}, Max: orb.Point{60, 60}})
			return err
		},
			fault.NoData, "", ErrEmptyWindow, "", 0, 0},
		{"window south of a grid's rows", func() error {
			_, err := regional.Window(orb.Bound{Min: orb.Point{0, -60}, Max: orb.Point{5, -50}})
			return err
		},
			fault.NoData, "", ErrEmptyWindow, "", 0, 0},
		{"window bound not finite", func() error {
			_, err := global.Window(orb.Bound{Min: orb.Point{math.NaN(), 0}, Max: orb.Point{1, 1}})
			return err
		},
			fault.InvalidCoords, "", nil, "", 0, 0},
		{"invalid grid", func() error { return (&Grid{NX: 2, NY: 2, DX: 1, DY: 1}).Validate() },
			fault.InvalidGrid, "", ErrInvalidGrid, "", 0, 0},
		{"mask of a nil grid", func() error { _, err := GridMask(nil, nil); return err },
			fault.InvalidGrid, "", ErrInvalidGrid, "", 0, 0},
		{"unknown registration", func() error { _, err := ParseRegistration("corner"); return err },
			fault.InvalidParameter, "registration", nil, "", 0, 0},
		{"unknown vertical sense", func() error { _, err := ParseVerticalSense("sideways"); return err },
			fault.InvalidParameter, "vertical", nil, "", 0, 0},
		{"resample spacing not a multiple", func() error { _, err := global.Resample(1.5, 1.5); return err },
			fault.InvalidParameter, "resolution", nil, "", 0, 0},
		{"histogram bin limit", func() error {
			_, err := AreaWeightedStats(regional, Mask{}, StatsOptions{HistogramBins: MaxHistogramBins + 1})
			return err
		}, fault.LimitExceeded, "histogram", nil, "max_histogram_bins", MaxHistogramBins, MaxHistogramBins + 1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := c.err()
			f, ok := fault.As(err)
			if !ok {
				t.Fatalf("error %v (%T) is not a *fault.Error", err, err)
			}
			if f.Kind != c.kind || f.Field != c.field {
				t.Errorf("kind %q field %q, want %q %q (%v)", f.Kind, f.Field, c.kind, c.field, err)
			}
			if c.cause != nil && !errors.Is(err, c.cause) {
				t.Errorf("error %v does not wrap %v", err, c.cause)
			}
			if c.limitName == "" {
				if f.Limit != nil {
					t.Errorf("limit %+v, want none", *f.Limit)
				}
				return
			}
			if f.Limit == nil || *f.Limit != (fault.Limit{Name: c.limitName, Value: c.limit, Asked: c.asked}) {
				t.Errorf("limit %+v, want %s %d asked %d (%v)", f.Limit, c.limitName, c.limit, c.asked, err)
			}
		})
	}
}
