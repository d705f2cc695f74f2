package survey

import (
	"math"
	"strings"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/geo"
)

func okPlan() Plan {
	return Plan{Name: "t", Lines: []Line{{Waypoints: []geo.Waypoint{{Lon: 0, Lat: 0}, {Lon: 1, Lat: 0}}}},
		Settings: Settings{Dataset: "d"}}
}

func TestValidate(t *testing.T) {
	nan := math.NaN()
	cold := -1.8 // sea water near its freezing point is a real temperature, not "unset"
	cases := []struct {
		name   string
		edit   func(*Plan)
		fields []string // every field the fault must name; nil means valid
	}{
		{"defaults", func(p *Plan) {}, nil},
		{"cold water kept", func(p *Plan) { p.Settings.WaterTemperatureC = &cold }, nil},
		{"no lines", func(p *Plan) { p.Lines = nil }, []string{"lines"}},
		{"one waypoint", func(p *Plan) { p.Lines[0].Waypoints = p.Lines[0].Waypoints[:1] }, []string{"lines[0].waypoints"}},
		{"no dataset", func(p *Plan) { p.Settings.Dataset = " " }, []string{"settings.dataset"}},
		{"angle and width", func(p *Plan) { p.Settings.SwathAngleDeg, p.Settings.SwathWidthM = 120, 3000 }, []string{"settings.swath_width_m"}},
		{"several bad values named", func(p *Plan) {
			p.Settings.OverlapPct = 100
			p.Settings.SpeedOnLineKn = nan
			p.Settings.SwathAngleDeg = 180
		}, []string{"settings.overlap_pct", "settings.speed_on_line_kn", "settings.swath_angle_deg"}},
		{"profile not increasing", func(p *Plan) {
			p.Settings.SoundProfile = []ProfileStep{{0, 20, 35}, {0, 10, 35}}
		}, []string{"settings.sound_profile[1].depth_m"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := okPlan()
			c.edit(&p)
			for _, q := range []Plan{p, p.WithDefaults()} {
				err := q.Validate(10, 100)
				if c.fields == nil {
					if err != nil {
						t.Fatalf("want valid, got %v", err)
					}
					continue
				}
				f, ok := fault.As(err)
				if !ok {
					t.Fatalf("want a fault naming %v, got %v", c.fields, err)
				}
				for _, fl := range c.fields {
					if !strings.Contains(f.Msg, fl) && f.Field != fl {
						t.Errorf("fault %q does not name %s", f.Msg, fl)
					}
				}
			}
		})
	}
}

func TestValidateLimits(t *testing.T) {
	p := okPlan()
	p.Lines = append(p.Lines, p.Lines[0], p.Lines[0])
	if f, ok := fault.As(p.Validate(2, 100)); !ok || f.Limit == nil || f.Limit.Name != "max_plan_lines" || f.Limit.Asked != 3 {
		t.Fatalf("3 lines over a limit of 2: got %v", f)
	}
	q := okPlan()
	q.Lines[0].Waypoints = append(q.Lines[0].Waypoints, geo.Waypoint{Lon: 2, Lat: 0})
	if f, ok := fault.As(q.Validate(2, 2)); !ok || f.Limit == nil || f.Limit.Name != "max_vertices" || f.Field != "lines[0].waypoints" {
		t.Fatalf("3 waypoints over a limit of 2: got %+v", f)
	}
}

func TestWithDefaults(t *testing.T) {
	p := okPlan().WithDefaults()
	s := p.Settings
	if s.SpeedOnLineKn != DefaultSpeedOnLineKn || s.SwathAngleDeg != DefaultSwathAngleDeg || *s.WaterTemperatureC != DefaultTemperatureC {
		t.Fatalf("defaults not filled: %+v", s)
	}
	w := okPlan()
	w.Settings.SwathWidthM = 2000
	if got := w.WithDefaults().Settings.SwathAngleDeg; got != 0 {
		t.Fatalf("a fixed swath width must not get a default angle, got %g", got)
	}
}
