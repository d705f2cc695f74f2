package survey

import (
	"time"

	"ridgeflank/geo"
)

// Plan is a named set of survey lines with the settings it is checked under. It is the body of
// POST /api/plans and /api/plans/check, the stored form of a plan, and what `ridgeflank plan
// check` builds from its file and flags. Lines are sailed in order; the run from the end of one
// line to the start of the next is transit.
//
// Plans are survey-planning aids, not navigation: expected depths are model estimates and
// gridded data; defer to nautical charts, surveys and the local hydrographic authority.
type Plan struct {
	ID          string   `json:"id,omitempty"`
	Name        string   `json:"name"`
	Description string   `json:"description,omitempty"`
	Lines       []Line   `json:"lines"`
	Settings    Settings `json:"settings"`
	Version     int64    `json:"version,omitempty"`
	// Set by the store on stored plans (UTC); ignored in a plan given to create or update.
	CreatedAt *time.Time `json:"created_at,omitempty"`
	UpdatedAt *time.Time `json:"updated_at,omitempty"`
}

// Line is one survey line: at least two waypoints (decimal degrees, optional names) joined by
// WGS84 geodesics.
type Line struct {
	Name      string         `json:"name,omitempty"`
	Waypoints []geo.Waypoint `json:"waypoints"`
}

// Settings are what a plan is checked under. Zero values (nil pointers) take the defaults of
// Defaults(), except OverlapPct, SafetyDepthM and TransducerM, where zero means zero (no overlap,
// no safety-depth test, transducer at the surface); a
// swath is given either by SwathAngleDeg (total opening angle) or by SwathWidthM (fixed width on
// the seafloor), not both. Depths are metres positive down.
type Settings struct {
	Dataset  string `json:"dataset"`            // dataset id
	Model    string `json:"model,omitempty"`    // cooling model id; "" is the service default
	Sediment string `json:"sediment,omitempty"` // compaction law; "" is the service default

	SpeedOnLineKn  float64 `json:"speed_on_line_kn,omitempty"`  // knots (1 kn = 1852 m/h)
	SpeedTransitKn float64 `json:"speed_transit_kn,omitempty"`  // knots
	SwathAngleDeg  float64 `json:"swath_angle_deg,omitempty"`   // total swath opening angle, degrees, 0 < a < 180
	SwathWidthM    float64 `json:"swath_width_m,omitempty"`     // fixed swath width on the seafloor, m
	OverlapPct     float64 `json:"overlap_pct,omitempty"`       // wanted overlap between adjacent swaths, % of swath width, 0 ≤ p < 100
	SafetyDepthM   float64 `json:"safety_depth_m,omitempty"`    // shallower expected depth is a hazard, m
	SpacingKm      float64 `json:"sample_spacing_km,omitempty"` // along-track sample spacing, km; 0 is the grid's spacing
	TransducerM    float64 `json:"transducer_depth_m,omitempty"`

	// Sound speed: a profile (depth-ordered) or single values for the whole water column.
	// nil takes the default (0 °C is a real temperature, so these are pointers).
	WaterTemperatureC *float64      `json:"water_temperature_c,omitempty"` // °C
	SalinityPSU       *float64      `json:"salinity_psu,omitempty"`        // practical salinity (‰)
	SoundProfile      []ProfileStep `json:"sound_profile,omitempty"`

	// Hazard thresholds.
	SeamountM   float64 `json:"seamount_threshold_m,omitempty"` // observed shallower than predicted by more than this is a hazard, m
	MaxSlopeDeg float64 `json:"max_slope_deg,omitempty"`        // steeper seafloor is a hazard, degrees
}

// ProfileStep is one level of a water temperature and salinity profile.
type ProfileStep struct {
	DepthM       float64 `json:"depth_m"`
	TemperatureC float64 `json:"temperature_c"`
	SalinityPSU  float64 `json:"salinity_psu"`
}

// Hazard kinds.
const (
	HazardShallow  = "shallower_than_safety_depth" // expected depth shallower than the safety depth
	HazardSeamount = "observed_above_prediction"   // observed much shallower than predicted (seamounts, volcanic edifices)
	HazardSlope    = "steep_slope"                 // grid gradient steeper than MaxSlopeDeg
	HazardNoData   = "no_data"                     // no expected depth at all
)

// Depth sources of a sample's expected depth.
const (
	SourceObserved  = "observed"  // the dataset's bathymetry
	SourcePredicted = "predicted" // the cooling model from the sample's age (sediment-loaded)
	SourceNone      = "none"
)

// Hazard is a stretch of a line where something needs the planner's attention. A hazard covers
// consecutive samples from FromSample to ToSample of one line; Lon/Lat/DistanceKm are at its
// worst sample.
type Hazard struct {
	Kind       string  `json:"kind"`
	Line       int     `json:"line"` // index into Plan.Lines
	LineName   string  `json:"line_name,omitempty"`
	FromSample int     `json:"from_sample"`
	ToSample   int     `json:"to_sample"`
	Lon        float64 `json:"lon"`
	Lat        float64 `json:"lat"`
	DistanceKm float64 `json:"distance_km"` // along the line
	LengthKm   float64 `json:"length_km"`   // along-track extent of the hazard
	DepthM     float64 `json:"depth_m"`     // expected depth at the worst sample (NaN → null)
	Value      float64 `json:"value"`       // the quantity tested: depth m, height above prediction m, slope degrees
	Limit      float64 `json:"limit"`       // the threshold it crossed
	Reason     string  `json:"reason"`      // one sentence for a person
}

// Samples are the values along one line, as columns (index i is the i-th sample). Depths are
// metres positive down; NaN where there is no value (null in JSON).
type Samples struct {
	Lon              []float64 `json:"lon"`
	Lat              []float64 `json:"lat"`
	Leg              []int     `json:"leg"`              // index of the leg the sample lies on
	DistanceKm       []float64 `json:"distance_km"`      // along the line
	DistanceNmi      []float64 `json:"distance_nmi"`     // along the line, international nautical miles (1852 m)
	TimeH            []float64 `json:"time_h"`           // from the line's start at the on-line speed
	ExpectedDepthM   []float64 `json:"expected_depth_m"` // observed where present, else predicted
	DepthSource      []string  `json:"depth_source"`     // SourceObserved, SourcePredicted, SourceNone
	UncertaintyM     []float64 `json:"depth_uncertainty_m"`
	ObservedDepthM   []float64 `json:"observed_depth_m"`
	PredictedDepthM  []float64 `json:"predicted_depth_m"`
	ResidualDepthM   []float64 `json:"residual_depth_m"`
	AgeMa            []float64 `json:"age_ma"`
	SlopeDeg         []float64 `json:"slope_deg"`
	SwathWidthM      []float64 `json:"swath_width_m"`
	SoundSpeedMS     []float64 `json:"sound_speed_m_s"`      // mean over the water column
	TwoWayTimeS      []float64 `json:"two_way_time_s"`       // at nadir
	TwoWayTimeOuterS []float64 `json:"outer_two_way_time_s"` // at the outer beam (straight rays)
	MaxPingRateHz    []float64 `json:"max_ping_rate_hz"`
	SoundingSpacingM []float64 `json:"sounding_spacing_m"` // along track, at the on-line speed and maximum ping rate
}

// Leg is the stretch of a line between two consecutive waypoints.
type Leg struct {
	From, To   int     `json:"-"`
	FromName   string  `json:"from_name,omitempty"`
	ToName     string  `json:"to_name,omitempty"`
	FromLon    float64 `json:"from_lon"`
	FromLat    float64 `json:"from_lat"`
	ToLon      float64 `json:"to_lon"`
	ToLat      float64 `json:"to_lat"`
	LengthKm   float64 `json:"length_km"`
	LengthNmi  float64 `json:"length_nmi"`
	AzimuthDeg float64 `json:"azimuth_deg"` // initial geodesic azimuth, degrees clockwise from north
	TimeH      float64 `json:"time_h"`
	MinDepthM  float64 `json:"min_depth_m"`
	MeanDepthM float64 `json:"mean_depth_m"`
	MaxDepthM  float64 `json:"max_depth_m"`
}

// LineResult is the check of one line.
type LineResult struct {
	Name         string  `json:"name,omitempty"`
	LengthKm     float64 `json:"length_km"`
	LengthNmi    float64 `json:"length_nmi"`
	TimeOnLineH  float64 `json:"time_on_line_h"`
	MinDepthM    float64 `json:"min_depth_m"`
	MeanDepthM   float64 `json:"mean_depth_m"`
	MaxDepthM    float64 `json:"max_depth_m"`
	MinSwathM    float64 `json:"min_swath_width_m"` // at the shallowest expected depth
	LineSpacingM float64 `json:"line_spacing_m"`    // for the wanted overlap at the shallowest depth (conservative)
	AreaKm2      float64 `json:"area_covered_km2"`
	Legs         []Leg   `json:"legs"`
	Samples      Samples `json:"samples"`
}

// Transit is the run from the end of one line to the start of the next.
type Transit struct {
	FromLine  int     `json:"from_line"`
	ToLine    int     `json:"to_line"`
	LengthKm  float64 `json:"length_km"`
	LengthNmi float64 `json:"length_nmi"`
	TimeH     float64 `json:"time_h"`
}

// Gap is a stretch between two adjacent lines where their swaths, at the line spacing the plan
// actually has, leave seafloor uncovered.
type Gap struct {
	LineA       int     `json:"line_a"`
	LineB       int     `json:"line_b"`
	Lon         float64 `json:"lon"`
	Lat         float64 `json:"lat"`
	DistanceKm  float64 `json:"distance_km"`  // along line A
	SeparationM float64 `json:"separation_m"` // distance between the lines there
	GapM        float64 `json:"gap_m"`        // uncovered width
	LengthKm    float64 `json:"length_km"`    // along-track extent of the gap on line A
}

// Totals sum a plan.
type Totals struct {
	LengthKm       float64 `json:"length_km"`
	LengthNmi      float64 `json:"length_nmi"`
	TimeOnLineH    float64 `json:"time_on_line_h"`
	TransitKm      float64 `json:"transit_km"`
	TransitNmi     float64 `json:"transit_nmi"`
	TimeInTransitH float64 `json:"time_in_transit_h"`
	TimeTotalH     float64 `json:"time_total_h"`
	MinDepthM      float64 `json:"min_depth_m"`
	MeanDepthM     float64 `json:"mean_depth_m"`
	MaxDepthM      float64 `json:"max_depth_m"`
	AreaKm2        float64 `json:"area_covered_km2"`
	Hazards        int     `json:"hazards"`
}

// Check is the answer to checking a plan.
type Check struct {
	Plan     Plan         `json:"plan"` // as checked, defaults filled in
	Caution  string       `json:"caution"`
	Model    string       `json:"model"`                // the cooling model the check used (the default when the plan names none)
	Label    string       `json:"data_label,omitempty"` // "SYNTHETIC" when a grid of the dataset is invented
	Lines    []LineResult `json:"lines"`
	Transits []Transit    `json:"transits"`
	Hazards  []Hazard     `json:"hazards"`
	Gaps     []Gap        `json:"coverage_gaps"`
	Totals   Totals       `json:"totals"`
	// Notes say what the check assumed or could not do (sound speed extrapolated outside the
	// range of its equation, no age-uncertainty grid, …), one sentence each.
	Notes []string `json:"notes,omitempty"`
}
