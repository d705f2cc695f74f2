package evaluate

import (
	"context"
	"errors"
	"math"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/thermal"
)

// A trench line across the antimeridian on plan-globe (SYNTHETIC: age 16 Ma everywhere) from
// 179° E to 179° W along the equator: the line takes the short way, 2° of the WGS84 equator =
// 2π·6378.137 km/360·2 = 222.639 km (worked by hand; tolerance 0.01 km), every sample carries
// thermal's slab answers at 16 Ma (1e-9 relative), and so does the length-weighted mean;
// the total slab pull is the mean times the length.
func TestSlabPullAntimeridian(t *testing.T) {
	s := checkService(t, Limits{})
	ctx := context.Background()
	st := SlabSettings{ConvergenceMmYr: 60, SlabLengthKm: 600, DipDeg: 45}
	wps := []geo.Waypoint{{Lon: 179, Lat: 0}, {Lon: -179, Lat: 0}}
	res, err := s.SlabPull(ctx, planGlobeID, Options{}, wps, st, 20)
	if err != nil {
		t.Fatal(err)
	}
	m := mustBuiltin(t, DefaultModel)
	want := SlabValues{16, thermal.SlabPullNPerM(m, 16, 600, 45), thermal.ThermalParameterKm(16, 60, 45),
		thermal.SlabCoreDepthKm(m, 16, 60, 45, thermal.SlabCoreIsothermC)}
	nearRel := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > 1e-6*math.Abs(want) {
			t.Errorf("%s = %v, want %v", what, got, want)
		}
	}
	t.Run("length", func(t *testing.T) {
		if got := res.AnsweredKm; math.Abs(got-222.639) > 0.01 {
			t.Errorf("answered length %v km, want 222.639", got)
		}
		for i, lon := range res.Track.Lons {
			if math.Abs(lon) < 179 {
				t.Errorf("sample %d at lon %v: the line went the long way", i, lon)
			}
		}
	})
	t.Run("samples", func(t *testing.T) {
		if len(res.Samples) < 10 {
			t.Fatalf("%d samples at 20 km over 222 km", len(res.Samples))
		}
		for _, v := range res.Samples {
			nearRel("age", v.AgeMa, want.AgeMa)
			nearRel("slab pull", v.SlabPullNPerM, want.SlabPullNPerM)
			nearRel("φ", v.ThermalParameterKm, want.ThermalParameterKm)
			nearRel("core depth", v.CoreDepthKm, want.CoreDepthKm)
		}
	})
	t.Run("mean", func(t *testing.T) {
		nearRel("mean slab pull", res.Mean.SlabPullNPerM, want.SlabPullNPerM)
		nearRel("mean φ", res.Mean.ThermalParameterKm, want.ThermalParameterKm)
		nearRel("mean core depth", res.Mean.CoreDepthKm, want.CoreDepthKm)
		nearRel("total", res.TotalSlabPullN, want.SlabPullNPerM*res.AnsweredKm*1000)
	})
	t.Run("csv columns", func(t *testing.T) {
		cols := res.SlabColumns()
		if cols[4].Name != SlabPullColumn || len(cols[4].Values) != len(res.Samples) {
			t.Errorf("columns %v", cols[4].Name)
		}
	})
}

// Limits and bad settings are typed faults naming the request's field.
func TestSlabPullFaults(t *testing.T) {
	s := checkService(t, Limits{MaxVertices: 3})
	ctx := context.Background()
	ok := SlabSettings{ConvergenceMmYr: 60, SlabLengthKm: 600, DipDeg: 45}
	line := []geo.Waypoint{{Lon: 0, Lat: 0}, {Lon: 10, Lat: 0}}
	cases := []struct {
		name  string
		wps   []geo.Waypoint
		st    SlabSettings
		km    float64
		kind  fault.Kind
		field string
		limit string
	}{
		{"dip 0", line, SlabSettings{60, 600, 0}, 20, fault.InvalidParameter, "dip-deg", ""},
		{"dip 95", line, SlabSettings{60, 600, 95}, 20, fault.InvalidParameter, "dip-deg", ""},
		{"negative rate", line, SlabSettings{-1, 600, 45}, 20, fault.InvalidParameter, "convergence-mm-yr", ""},
		{"NaN length", line, SlabSettings{60, math.NaN(), 45}, 20, fault.InvalidParameter, "slab-length-km", ""},
		{"vertices", []geo.Waypoint{{Lon: 0}, {Lon: 1}, {Lon: 2}, {Lon: 3}}, ok, 20, fault.LimitExceeded, "coords", "max_vertices"},
		{"samples", line, ok, 0.5, fault.LimitExceeded, "spacing-km", "max_slab_samples"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := s.SlabPull(ctx, planGlobeID, Options{}, c.wps, c.st, c.km)
			var fe *fault.Error
			if !errors.As(err, &fe) || fe.Kind != c.kind || fe.Field != c.field {
				t.Fatalf("got %v", err)
			}
			if c.limit != "" && (fe.Limit == nil || fe.Limit.Name != c.limit) {
				t.Errorf("limit %+v, want %s", fe.Limit, c.limit)
			}
		})
	}
}

// SlabAges answers thermal's functions at each age and refuses ages out of range.
func TestSlabAges(t *testing.T) {
	m := mustBuiltin(t, thermal.IDHalfSpace)
	st := SlabSettings{ConvergenceMmYr: 50, SlabLengthKm: 600, DipDeg: 45}
	got, err := SlabAges(context.Background(), m, "age", []float64{100}, st)
	if err != nil {
		t.Fatal(err)
	}
	// φ = 100 Ma × 50 mm/yr × sin 45° = 3535.534 km (worked by hand).
	if math.Abs(got[0].ThermalParameterKm-3535.534) > 0.001 {
		t.Errorf("φ %v km", got[0].ThermalParameterKm)
	}
	if _, err := SlabAges(context.Background(), m, "age", []float64{-5}, st); err == nil {
		t.Error("negative age accepted")
	}
}
