package server

import (
	"errors"
	"math"
	"net/http/httptest"
	"net/url"
	"strconv"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkt"
)

// Fuzz targets for the query parameters this package reads: coords (WKT), ranges
// (start:stop:step), bounding boxes and the parameter-name list. A refusal must be a catalogued
// 4xx problem naming the parameter; an accepted value must satisfy the documented rules.
//
//	go test ./server -run '^$' -fuzz '^FuzzParseCoords$' -fuzztime 60s

// wantParamProblem asserts err is a catalogued *Problem with a 4xx status naming param (when given).
func wantParamProblem(t *testing.T, err error, param string, codes ...string) {
	t.Helper()
	var p *Problem
	if !errors.As(err, &p) {
		t.Fatalf("error %v (%T) is not a *Problem", err, err)
	}
	if p.Status < 400 || p.Status > 499 {
		t.Fatalf("problem %v has status %d, want 4xx", p, p.Status)
	}
	if _, ok := problemKinds[p.Code]; !ok {
		t.Fatalf("problem code %q is not catalogued", p.Code)
	}
	if len(codes) > 0 {
		ok := false
		for _, c := range codes {
			ok = ok || p.Code == c
		}
		if !ok {
			t.Fatalf("problem code %q, want one of %v: %v", p.Code, codes, p)
		}
	}
	if param != "" && p.Parameter != param {
		t.Fatalf("problem names parameter %q, want %q: %v", p.Parameter, param, p)
	}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func FuzzParseCoords(f *testing.F) {
	for _, s := range []string{
		"POINT(-30 10)", "POINT(359.9 -90)", "POINT(-180 90)", "POINT(180.0000001 0)", "POINT(0 90.0000001)",
		"LINESTRING(179 0,-179 1)", "MULTIPOINT((0 0),(1 1))", "MULTIPOINT(0 0,1 1)",
		"POLYGON((0 0,1 0,1 1,0 0))", "MULTIPOLYGON(((0 0,1 0,1 1,0 0)),((2 2,3 2,3 3,2 2)))",
		"GEOMETRYCOLLECTION(POINT(0 0),LINESTRING(0 0,1 1))", "POINT(NaN 0)", "POINT(1e308 0)",
		"POINT(5e-324 -0)", "POINT(Inf 0)", "POINT(0)", "POINT(0 0 0)", "POINT EMPTY", "", "POINT(\xff 0)",
		"LINESTRING(0 0,1 1,)", "POINT((0 0))", "point(1 2)",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		r := httptest.NewRequest("GET", "/x?coords="+url.QueryEscape(s), nil)
		g, err := parseCoords(r)
		if err != nil {
			wantParamProblem(t, err, "coords", CodeInvalidCoords)
			return
		}
		visit(g, func(p orb.Point) {
			if !finite(p[0]) || !finite(p[1]) || p[0] < -180 || p[0] > 360 || p[1] < -90 || p[1] > 90 {
				t.Fatalf("coords=%q accepted with position %v outside −180..360, −90..90", s, p)
			}
		})
		// Round trip: the geometry written as WKT reads back as itself.
		txt := wkt.MarshalString(g)
		back, err := wkt.Unmarshal(txt)
		if err != nil {
			t.Fatalf("coords=%q: written back as %q it does not parse: %v", s, txt, err)
		}
		if !orb.Equal(back, g) {
			t.Fatalf("coords=%q: round trip through %q changed it to %v", s, txt, back)
		}
	})
}

func FuzzParseRange(f *testing.F) {
	for _, s := range []string{
		"0:200:1", "0:1e308:1e-308", "0:1e308:5e-324", "5", "-0", "0:0:1", "1:0:1", "0:1:0", "0:1:-1",
		"NaN", "0:NaN:1", "Inf", "0:10", "0:10:1:1", "", ":", "::", " 0 : 10 : 2.5 ", "0:10:3",
		"1e308:1e308:1e308", "-1e308:1e308:1e308", "0x10:0x20:1", "\xff:1:1", "0:10000:1", "0:10001:1",
	} {
		f.Add(s)
	}
	const maxPoints = 10_001 // Limits.MaxCurvePoints' default
	f.Fuzz(func(t *testing.T, s string) {
		vals, err := parseRange("ages", s, maxPoints)
		if err != nil {
			wantParamProblem(t, err, "ages", CodeInvalidParameter, CodeLimitExceeded)
			return
		}
		if len(vals) < 1 || len(vals) > maxPoints {
			t.Fatalf("ages=%q gave %d values, want 1..%d", s, len(vals), maxPoints)
		}
		for i, v := range vals {
			if !finite(v) {
				t.Fatalf("ages=%q value %d is %v", s, i, v)
			}
			if i > 0 && !(v >= vals[i-1]) {
				t.Fatalf("ages=%q values %d and %d decrease: %v, %v", s, i-1, i, vals[i-1], v)
			}
		}
		// A single number is that number, read as strconv reads it.
		if len(vals) == 1 {
			if v, err := strconv.ParseFloat(s, 64); err == nil && v != vals[0] {
				t.Fatalf("ages=%q gave %v, strconv reads %v", s, vals[0], v)
			}
		}
	})
}

func FuzzBBoxArea(f *testing.F) {
	for _, s := range []string{
		"0,0,1,1", "170,-10,-170,10", "-180,-90,180,90", "180,0,-180,1", "0,0,0,1", "0,1,1,0", "0,0,1",
		"0,0,1,1,", "NaN,0,1,1", "0,0,1e308,1", "-0,5e-324,1,1", "181,0,1,1", "0,-91,1,1", "\xff,0,1,1", "",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		txt, err := bboxArea(s)
		if err != nil {
			wantParamProblem(t, err, "bbox", CodeInvalidParameter)
			return
		}
		g, err := wkt.Unmarshal(txt)
		if err != nil {
			t.Fatalf("bbox=%q gave WKT %q that does not parse: %v", s, txt, err)
		}
		visit(g, func(p orb.Point) {
			if !finite(p[0]) || !finite(p[1]) || p[0] < -180 || p[0] > 180 || p[1] < -90 || p[1] > 90 {
				t.Fatalf("bbox=%q gave position %v outside −180..180, −90..90", s, p)
			}
		})
		// The answer is the box itself or its two halves either side of the antimeridian.
		b := g.Bound()
		if !(b.Max[0] > b.Min[0]) || !(b.Max[1] > b.Min[1]) {
			t.Fatalf("bbox=%q gave an empty area %q", s, txt)
		}
	})
}

func FuzzParseBBox(f *testing.F) {
	for _, s := range []string{
		"0,0,1,1", "170,-10,-170,10", "-180,-90,180,90", "0,NaN,1,1", "0,0,1,NaN", "NaN,0,1,1",
		"Inf,0,1,1", "0,0,1e308,1", "0,1,1,0", "0,0,1", "0,0,1,1,", "", "\xff,0,1,1",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		b, err := parseBBox(s)
		if err != nil {
			wantParamProblem(t, err, "bbox", CodeInvalidParameter)
			return
		}
		for _, v := range []float64{b.Min[0], b.Min[1], b.Max[0], b.Max[1]} {
			if !finite(v) {
				t.Fatalf("bbox=%q accepted with a value that is not a finite number: %v", s, b)
			}
		}
		if b.Min[1] < -90 || b.Max[1] > 90 || b.Min[1] > b.Max[1] {
			t.Fatalf("bbox=%q accepted with latitudes %v..%v", s, b.Min[1], b.Max[1])
		}
		if b.Min[0] < -180 || b.Min[0] > 360 || b.Max[0] < -180 || b.Max[0] > 360 {
			t.Fatalf("bbox=%q accepted with longitudes %v, %v outside −180..360", s, b.Min[0], b.Max[0])
		}
	})
}

func FuzzQueryOptions(f *testing.F) {
	for _, s := range []string{
		"parameter-name=depth,heat-flow", "parameter-name=a,,b", "parameter-name=depth,", "parameter-name=%FF",
		"age-uncertainty-ma=NaN", "age-uncertainty-ma=1e308", "age-uncertainty-ma=-0", "model=gdh1&sediment=x",
		"parameter-name=" + url.QueryEscape(" , ,"), "",
	} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, raw string) {
		q, err := url.ParseQuery(raw)
		if err != nil {
			return // not a query string net/http would hand over either
		}
		r := httptest.NewRequest("GET", "/x", nil)
		r.URL.RawQuery = q.Encode()
		o := queryOptions(r)
		// Every name of the list is kept, empty ones included, so that none is dropped silently.
		if names := q.Get("parameter-name"); names != "" {
			commas := 0
			for _, c := range names {
				if c == ',' {
					commas++
				}
			}
			if len(o.Parameters) != commas+1 {
				t.Fatalf("parameter-name=%q gave %d names, want %d", names, len(o.Parameters), commas+1)
			}
		} else if len(o.Parameters) != 0 {
			t.Fatalf("no parameter-name gave names %q", o.Parameters)
		}
		// An unreadable uncertainty is passed on as NaN (refused by the service), never as 0.
		if v := strings.TrimSpace(q.Get("age-uncertainty-ma")); v != "" {
			if _, err := strconv.ParseFloat(v, 64); err != nil && !math.IsNaN(o.AgeUncertaintyMa) {
				t.Fatalf("age-uncertainty-ma=%q gave %v, want NaN", v, o.AgeUncertaintyMa)
			}
		}
	})
}
