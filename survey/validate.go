package survey

import (
	"fmt"
	"math"
	"strings"

	"ridgeflank/fault"
	"ridgeflank/geo"
)

// Default settings. They are starting points for a deep-water multibeam survey, not advice:
// common practice, no source.
const (
	DefaultSpeedOnLineKn  = 8.0   // knots on line
	DefaultSpeedTransitKn = 11.0  // knots in transit
	DefaultSwathAngleDeg  = 120.0 // total opening angle used when neither angle nor width is given
	DefaultTemperatureC   = 4.0   // °C, deep-ocean water
	DefaultSalinityPSU    = 35.0  // practical salinity
	DefaultSeamountM      = 500.0 // observed shallower than predicted by more than this, m
	DefaultMaxSlopeDeg    = 15.0  // degrees
)

// Accepted ranges of the settings (inclusive unless noted). The water-property ranges are wider
// than the range over which Mackenzie (1981) fitted his equation (T 2–30 °C, S 25–40 ‰,
// D 0–8000 m); values outside the fit are accepted and flagged by the check.
const (
	MaxSpeedKn       = 40.0
	MaxSwathAngleDeg = 170.0 // exclusive of 180: a flat swath has no seafloor width
	MaxSwathWidthM   = 50_000.0
	MaxSafetyDepthM  = 11_000.0
	MaxSpacingKm     = 1_000.0
	MinSpacingKm     = 0.001
	MaxTransducerM   = 50.0
	MinTemperatureC  = -2.5
	MaxTemperatureC  = 40.0
	MaxSalinityPSU   = 45.0
	MaxProfileSteps  = 1_000
)

// Defaults returns the settings a plan takes where it leaves a field zero (see Settings).
func Defaults() Settings {
	t, s := DefaultTemperatureC, DefaultSalinityPSU
	return Settings{
		SpeedOnLineKn:     DefaultSpeedOnLineKn,
		SpeedTransitKn:    DefaultSpeedTransitKn,
		SwathAngleDeg:     DefaultSwathAngleDeg,
		WaterTemperatureC: &t,
		SalinityPSU:       &s,
		SeamountM:         DefaultSeamountM,
		MaxSlopeDeg:       DefaultMaxSlopeDeg,
	}
}

// WithDefaults returns p with zero settings replaced by Defaults() (a swath angle only when
// neither angle nor width is given). Lines are shared with p, not copied.
func (p Plan) WithDefaults() Plan {
	d := Defaults()
	s := &p.Settings
	if s.SpeedOnLineKn == 0 {
		s.SpeedOnLineKn = d.SpeedOnLineKn
	}
	if s.SpeedTransitKn == 0 {
		s.SpeedTransitKn = d.SpeedTransitKn
	}
	if s.SwathAngleDeg == 0 && s.SwathWidthM == 0 {
		s.SwathAngleDeg = d.SwathAngleDeg
	}
	if s.WaterTemperatureC == nil {
		s.WaterTemperatureC = d.WaterTemperatureC
	}
	if s.SalinityPSU == nil {
		s.SalinityPSU = d.SalinityPSU
	}
	if s.SeamountM == 0 {
		s.SeamountM = d.SeamountM
	}
	if s.MaxSlopeDeg == 0 {
		s.MaxSlopeDeg = d.MaxSlopeDeg
	}
	return p
}

// Validate checks a plan (before or after WithDefaults): 1..maxLines lines, each a valid track
// of 2..maxWaypoints waypoints (geo.ValidateWaypoints), and every setting finite and within the
// ranges above. Every bad field is named in one fault.InvalidParameter (Field is the first);
// too many lines is fault.Over("max_plan_lines"), too many waypoints in a line
// fault.Over("max_vertices"). Valid waypoints are not changed (wrap longitudes with
// geo.ValidateWaypoints when the check samples them).
func (p Plan) Validate(maxLines, maxWaypoints int) error {
	if len(p.Lines) == 0 {
		return fault.New(fault.InvalidParameter, "lines", "the plan has no lines")
	}
	if maxLines > 0 && len(p.Lines) > maxLines {
		return fault.Over("max_plan_lines", int64(maxLines), int64(len(p.Lines)), "lines",
			"the plan has %d lines; the limit is %d", len(p.Lines), maxLines)
	}
	var bad []string
	var first string
	add := func(field, format string, args ...any) {
		if first == "" {
			first = field
		}
		bad = append(bad, field+": "+fmt.Sprintf(format, args...))
	}
	for i, l := range p.Lines {
		if _, err := geo.ValidateWaypoints(l.Waypoints, maxWaypoints); err != nil {
			if f, ok := fault.As(err); ok && f.Kind == fault.LimitExceeded {
				g := *f
				g.Field = fmt.Sprintf("lines[%d].waypoints", i)
				return &g
			}
			add(fmt.Sprintf("lines[%d].waypoints", i), "%v", err)
		}
	}
	s := p.Settings
	if strings.TrimSpace(s.Dataset) == "" {
		add("settings.dataset", "a dataset id is required")
	}
	within := func(field string, v, lo, hi float64, loOpen bool) {
		switch {
		case math.IsNaN(v) || math.IsInf(v, 0):
			add(field, "%v is not a finite number", v)
		case loOpen && v <= lo, !loOpen && v < lo, v > hi:
			open := "["
			if loOpen {
				open = "("
			}
			add(field, "%g is outside %s%g, %g]", v, open, lo, hi)
		}
	}
	optional := func(field string, v, lo, hi float64) { // zero means "default" or "none"
		if v != 0 {
			within(field, v, lo, hi, false)
		}
	}
	optional("settings.speed_on_line_kn", s.SpeedOnLineKn, 0.1, MaxSpeedKn)
	optional("settings.speed_transit_kn", s.SpeedTransitKn, 0.1, MaxSpeedKn)
	if s.SwathAngleDeg != 0 && s.SwathWidthM != 0 {
		add("settings.swath_width_m", "give swath_angle_deg or swath_width_m, not both")
	}
	optional("settings.swath_angle_deg", s.SwathAngleDeg, 1, MaxSwathAngleDeg)
	optional("settings.swath_width_m", s.SwathWidthM, 1, MaxSwathWidthM)
	within("settings.overlap_pct", s.OverlapPct, 0, 99, false)
	within("settings.safety_depth_m", s.SafetyDepthM, 0, MaxSafetyDepthM, false)
	optional("settings.sample_spacing_km", s.SpacingKm, MinSpacingKm, MaxSpacingKm)
	within("settings.transducer_depth_m", s.TransducerM, 0, MaxTransducerM, false)
	if s.WaterTemperatureC != nil {
		within("settings.water_temperature_c", *s.WaterTemperatureC, MinTemperatureC, MaxTemperatureC, false)
	}
	if s.SalinityPSU != nil {
		within("settings.salinity_psu", *s.SalinityPSU, 0, MaxSalinityPSU, false)
	}
	if len(s.SoundProfile) > MaxProfileSteps {
		return fault.Over("max_profile_steps", MaxProfileSteps, int64(len(s.SoundProfile)), "settings.sound_profile",
			"the sound profile has %d levels; the limit is %d", len(s.SoundProfile), MaxProfileSteps)
	}
	for i, st := range s.SoundProfile {
		f := fmt.Sprintf("settings.sound_profile[%d]", i)
		within(f+".depth_m", st.DepthM, 0, MaxSafetyDepthM, false)
		within(f+".temperature_c", st.TemperatureC, MinTemperatureC, MaxTemperatureC, false)
		within(f+".salinity_psu", st.SalinityPSU, 0, MaxSalinityPSU, false)
		if i > 0 && !(st.DepthM > s.SoundProfile[i-1].DepthM) {
			add(f+".depth_m", "profile depths must increase (%g after %g)", st.DepthM, s.SoundProfile[i-1].DepthM)
		}
	}
	optional("settings.seamount_threshold_m", s.SeamountM, 1, MaxSafetyDepthM)
	optional("settings.max_slope_deg", s.MaxSlopeDeg, 0.1, 89)
	if len(bad) > 0 {
		return fault.New(fault.InvalidParameter, first, "invalid plan: %s", strings.Join(bad, "; "))
	}
	return nil
}
