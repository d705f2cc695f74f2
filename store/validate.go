package store

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/paulmach/orb"
)

// Now is the store's clock: UTC, truncated to microseconds (the precision both backends keep).
func Now() time.Time { return time.Now().UTC().Truncate(time.Microsecond) }

// checkText: valid UTF-8 without NUL (PostgreSQL text cannot hold NUL), at most max bytes.
func checkText(field, s string, max int, required bool) error {
	if required && strings.TrimSpace(s) == "" {
		return fmt.Errorf("%w: %s is required", ErrInvalid, field)
	}
	if len(s) > max {
		return fmt.Errorf("%w: %s is longer than %d bytes", ErrInvalid, field, max)
	}
	if !utf8.ValidString(s) || strings.IndexByte(s, 0) >= 0 {
		return fmt.Errorf("%w: %s must be UTF-8 text without NUL characters", ErrInvalid, field)
	}
	return nil
}

func checkOptionalID(field, id string) error {
	if id == "" {
		return nil
	}
	if err := ValidateID(id); err != nil {
		return fmt.Errorf("%s: %w", field, err)
	}
	return nil
}

// Validate checks a page request.
func (p Page) Validate() error {
	if p.Limit < 0 || p.Limit > MaxListLimit {
		return fmt.Errorf("%w: limit must be within 0..%d", ErrInvalid, MaxListLimit)
	}
	if p.Offset < 0 {
		return fmt.Errorf("%w: offset must not be negative", ErrInvalid)
	}
	return nil
}

// EffectiveLimit is Limit, or MaxListLimit when Limit is 0.
func (p Page) EffectiveLimit() int {
	if p.Limit == 0 {
		return MaxListLimit
	}
	return p.Limit
}

// Validate checks the fields a caller supplies for a region (not times or version).
func (r Region) Validate() error {
	if err := checkOptionalID("region id", r.ID); err != nil {
		return err
	}
	if err := checkText("region name", r.Name, MaxNameLen, true); err != nil {
		return err
	}
	if err := checkText("region description", r.Description, MaxDescriptionLen, false); err != nil {
		return err
	}
	if err := checkText("region owner", r.Owner, MaxNameLen, false); err != nil {
		return err
	}
	if len(r.Tags) > MaxTags {
		return fmt.Errorf("%w: a region has at most %d tags", ErrInvalid, MaxTags)
	}
	for _, t := range r.Tags {
		if err := checkText("tag", t, MaxTagLen, true); err != nil {
			return err
		}
	}
	return ValidateMultiPolygon("region geometry", r.Geometry)
}

// NormaliseTags returns tags as a non-nil slice.
func NormaliseTags(tags []string) []string {
	if tags == nil {
		return []string{}
	}
	return tags
}

// ValidateMultiPolygon checks the structural rules of stored polygons (see Region).
func ValidateMultiPolygon(field string, mp orb.MultiPolygon) error {
	if len(mp) == 0 {
		return fmt.Errorf("%w: %s is empty", ErrInvalid, field)
	}
	n := 0
	for i, p := range mp {
		if len(p) == 0 {
			return fmt.Errorf("%w: %s: polygon %d has no rings", ErrInvalid, field, i)
		}
		for j, ring := range p {
			if len(ring) < 4 {
				return fmt.Errorf("%w: %s: polygon %d ring %d has fewer than 4 positions", ErrInvalid, field, i, j)
			}
			if ring[0] != ring[len(ring)-1] {
				return fmt.Errorf("%w: %s: polygon %d ring %d is not closed", ErrInvalid, field, i, j)
			}
			for _, pt := range ring {
				if err := checkPosition(field, pt); err != nil {
					return err
				}
			}
			n += len(ring)
		}
	}
	if n > MaxVertices {
		return fmt.Errorf("%w: %s has more than %d positions", ErrInvalid, field, MaxVertices)
	}
	return nil
}

func checkPosition(field string, pt orb.Point) error {
	lon, lat := pt[0], pt[1]
	if math.IsNaN(lon) || math.IsNaN(lat) || math.IsInf(lon, 0) || math.IsInf(lat, 0) {
		return fmt.Errorf("%w: %s has a non-finite coordinate", ErrInvalid, field)
	}
	if lat < -90 || lat > 90 {
		return fmt.Errorf("%w: %s: latitude %g is outside [-90, 90]", ErrInvalid, field, lat)
	}
	if lon < -540 || lon > 540 {
		return fmt.Errorf("%w: %s: longitude %g is outside [-540, 540]", ErrInvalid, field, lon)
	}
	return nil
}

// ValidateQueryGeometry checks an intersects query geometry: a supported type, non-empty,
// with positions under the same rules as stored geometry (rings need not be closed for Bound).
func ValidateQueryGeometry(g orb.Geometry) error {
	const field = "intersects geometry"
	var pts []orb.Point
	switch v := g.(type) {
	case orb.Point:
		pts = []orb.Point{v}
	case orb.MultiPoint:
		pts = v
	case orb.LineString:
		if len(v) < 2 {
			return fmt.Errorf("%w: %s: a line needs two positions", ErrInvalid, field)
		}
		pts = v
	case orb.MultiLineString:
		for _, l := range v {
			if len(l) < 2 {
				return fmt.Errorf("%w: %s: a line needs two positions", ErrInvalid, field)
			}
			pts = append(pts, l...)
		}
	case orb.Polygon:
		return ValidateMultiPolygon(field, orb.MultiPolygon{v})
	case orb.MultiPolygon:
		return ValidateMultiPolygon(field, v)
	case orb.Bound:
		pts = []orb.Point{v.Min, v.Max}
		if v.Min[0] > v.Max[0] || v.Min[1] > v.Max[1] {
			return fmt.Errorf("%w: %s: bound min exceeds max (use RegionFilter.BBox for boxes across the antimeridian)", ErrInvalid, field)
		}
	case nil:
		return fmt.Errorf("%w: %s is missing", ErrInvalid, field)
	default:
		return fmt.Errorf("%w: %s: unsupported type %s", ErrInvalid, field, g.GeoJSONType())
	}
	if len(pts) == 0 {
		return fmt.Errorf("%w: %s is empty", ErrInvalid, field)
	}
	for _, p := range pts {
		if err := checkPosition(field, p); err != nil {
			return err
		}
	}
	return nil
}

// QueryShifts are the longitude offsets (degrees) at which spatial queries are tested, so that
// geometry stored with longitudes beyond ±180 matches queries in −180..180 and vice versa.
var QueryShifts = [3]float64{0, 360, -360}

// ShiftLon returns a copy of g with dLon added to every longitude.
func ShiftLon(g orb.Geometry, dLon float64) orb.Geometry {
	if dLon == 0 {
		return g
	}
	c := orb.Clone(g)
	switch v := c.(type) {
	case orb.Bound:
		v.Min[0] += dLon
		v.Max[0] += dLon
		return v
	case orb.Point:
		v[0] += dLon
		return v
	}
	shiftInPlace(c, dLon)
	return c
}

func shiftInPlace(g orb.Geometry, d float64) {
	switch v := g.(type) {
	case orb.MultiPoint:
		for i := range v {
			v[i][0] += d
		}
	case orb.LineString:
		for i := range v {
			v[i][0] += d
		}
	case orb.MultiLineString:
		for _, l := range v {
			shiftInPlace(l, d)
		}
	case orb.Ring:
		for i := range v {
			v[i][0] += d
		}
	case orb.Polygon:
		for _, r := range v {
			shiftInPlace(r, d)
		}
	case orb.MultiPolygon:
		for _, p := range v {
			shiftInPlace(p, d)
		}
	}
}

// SplitBBox validates a query box and returns it as one or two boxes with longitudes in
// [-180, 180]: west > east (after mapping longitudes from 0..360 to −180..180) means the box
// crosses the antimeridian and is split there; a box 360° or more wide covers every longitude.
func SplitBBox(b orb.Bound) ([]orb.Bound, error) {
	w, s, e, n := b.Min[0], b.Min[1], b.Max[0], b.Max[1]
	for _, v := range []float64{w, s, e, n} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("%w: bbox has a non-finite coordinate", ErrInvalid)
		}
	}
	if s < -90 || n > 90 || s > n {
		return nil, fmt.Errorf("%w: bbox latitudes must satisfy -90 <= south <= north <= 90", ErrInvalid)
	}
	if w < -180 || w > 360 || e < -180 || e > 360 {
		return nil, fmt.Errorf("%w: bbox longitudes must be within [-180, 360]", ErrInvalid)
	}
	if w <= e && e-w >= 360 {
		return []orb.Bound{{Min: orb.Point{-180, s}, Max: orb.Point{180, n}}}, nil
	}
	wrap := func(x float64) float64 {
		if x > 180 {
			return x - 360
		}
		return x
	}
	ww, ee := wrap(w), wrap(e)
	if ww <= ee {
		return []orb.Bound{{Min: orb.Point{ww, s}, Max: orb.Point{ee, n}}}, nil
	}
	// West of east after wrapping: the box crosses the antimeridian.
	if ee == -180 { // ends exactly at the antimeridian: one box
		return []orb.Bound{{Min: orb.Point{ww, s}, Max: orb.Point{180, n}}}, nil
	}
	if ww == 180 {
		return []orb.Bound{{Min: orb.Point{-180, s}, Max: orb.Point{ee, n}}}, nil
	}
	return []orb.Bound{
		{Min: orb.Point{ww, s}, Max: orb.Point{180, n}},
		{Min: orb.Point{-180, s}, Max: orb.Point{ee, n}},
	}, nil
}

// Validate checks the caller-supplied metadata of a grid to import.
func (g Grid) Validate() error {
	if err := checkOptionalID("grid id", g.ID); err != nil {
		return err
	}
	if err := checkText("grid name", g.Name, MaxNameLen, true); err != nil {
		return err
	}
	if !g.Kind.Valid() {
		return fmt.Errorf("%w: grid kind %q: want one of %v", ErrInvalid, g.Kind, GridKinds())
	}
	if err := checkText("grid units", g.Units, MaxTagLen, false); err != nil {
		return err
	}
	switch g.VerticalSense {
	case DepthPositiveDown, ElevationPositiveUp, VerticalNone:
	default:
		return fmt.Errorf("%w: vertical sense %q: want %s, %s or %s", ErrInvalid, g.VerticalSense, DepthPositiveDown, ElevationPositiveUp, VerticalNone)
	}
	if g.Kind == KindDepth && g.VerticalSense != DepthPositiveDown {
		return fmt.Errorf("%w: a depth grid must be %s", ErrInvalid, DepthPositiveDown)
	}
	if g.Kind == KindElevation && g.VerticalSense != ElevationPositiveUp {
		return fmt.Errorf("%w: an elevation grid must be %s", ErrInvalid, ElevationPositiveUp)
	}
	if !(g.ResolutionDeg > 0) || math.IsInf(g.ResolutionDeg, 0) || g.ResolutionDeg > 360 {
		return fmt.Errorf("%w: grid resolution must be within (0, 360] degrees", ErrInvalid)
	}
	switch g.Registration {
	case CellCentre, Node:
	default:
		return fmt.Errorf("%w: grid registration %q: want %s or %s", ErrInvalid, g.Registration, CellCentre, Node)
	}
	if err := checkText("grid provenance", g.Provenance, MaxDescriptionLen, false); err != nil {
		return err
	}
	if err := checkText("grid licence", g.Licence, MaxDescriptionLen, false); err != nil {
		return err
	}
	if g.ContentHash != "" && !IsSHA256Hex(g.ContentHash) {
		return fmt.Errorf("%w: content hash must be 64 lower-case hex digits", ErrInvalid)
	}
	return ValidateMultiPolygon("grid footprint", g.Footprint)
}

// Valid reports whether k is a known grid kind.
func (k GridKind) Valid() bool {
	for _, v := range GridKinds() {
		if k == v {
			return true
		}
	}
	return false
}

// IsSHA256Hex reports whether s is 64 lower-case hex digits.
func IsSHA256Hex(s string) bool {
	if len(s) != 64 {
		return false
	}
	for i := 0; i < len(s); i++ {
		c := s[i]
		if !(c >= '0' && c <= '9' || c >= 'a' && c <= 'f') {
			return false
		}
	}
	return true
}

// roles lists each grid slot of a dataset with the grid kinds it accepts.
func (d Dataset) roles() []struct {
	name  string
	id    string
	kinds []GridKind
} {
	return []struct {
		name  string
		id    string
		kinds []GridKind
	}{
		{"age grid", d.AgeGridID, []GridKind{KindAge}},
		{"depth grid", d.DepthGridID, []GridKind{KindDepth, KindElevation}},
		{"sediment grid", d.SedimentGridID, []GridKind{KindSedimentThickness}},
		{"crust grid", d.CrustGridID, []GridKind{KindCrustalThickness}},
		{"age uncertainty grid", d.AgeUncertaintyGridID, []GridKind{KindAgeUncertainty}},
	}
}

// Validate checks the caller-supplied fields of a dataset (not whether the grids exist).
func (d Dataset) Validate() error {
	if err := checkOptionalID("dataset id", d.ID); err != nil {
		return err
	}
	if err := checkText("dataset name", d.Name, MaxNameLen, true); err != nil {
		return err
	}
	if err := checkText("dataset description", d.Description, MaxDescriptionLen, false); err != nil {
		return err
	}
	if d.AgeGridID == "" {
		return fmt.Errorf("%w: a dataset needs an age grid", ErrInvalid)
	}
	for _, r := range d.roles() {
		if err := checkOptionalID(r.name, r.id); err != nil {
			return err
		}
	}
	return nil
}

// CheckGridKinds checks that every grid the dataset names exists in kinds (grid id → kind)
// and has a kind its slot accepts.
func (d Dataset) CheckGridKinds(kinds map[string]GridKind) error {
	for _, r := range d.roles() {
		if r.id == "" {
			continue
		}
		k, ok := kinds[r.id]
		if !ok {
			return fmt.Errorf("%w: %s %q does not exist", ErrInvalid, r.name, r.id)
		}
		good := false
		for _, want := range r.kinds {
			good = good || k == want
		}
		if !good {
			return fmt.Errorf("%w: %s %q is of kind %s, want %v", ErrInvalid, r.name, r.id, k, r.kinds)
		}
	}
	return nil
}

// Validate checks the caller-supplied fields of a track.
func (t Track) Validate() error {
	if err := checkOptionalID("track id", t.ID); err != nil {
		return err
	}
	if err := checkText("track name", t.Name, MaxNameLen, true); err != nil {
		return err
	}
	if err := checkText("track description", t.Description, MaxDescriptionLen, false); err != nil {
		return err
	}
	if len(t.Waypoints) < 2 {
		return fmt.Errorf("%w: a track needs at least two waypoints", ErrInvalid)
	}
	if len(t.Waypoints) > MaxVertices {
		return fmt.Errorf("%w: a track has at most %d waypoints", ErrInvalid, MaxVertices)
	}
	for _, p := range t.Waypoints {
		if err := checkPosition("track waypoints", p); err != nil {
			return err
		}
	}
	return checkParams("track params", t.Params)
}

// Validate checks the caller-supplied fields of a custom model.
func (m Model) Validate() error {
	if err := checkOptionalID("model id", m.ID); err != nil {
		return err
	}
	if err := checkText("model name", m.Name, MaxNameLen, true); err != nil {
		return err
	}
	if err := checkText("model description", m.Description, MaxDescriptionLen, false); err != nil {
		return err
	}
	if len(bytes.TrimSpace(m.Params)) == 0 {
		return fmt.Errorf("%w: model params are required", ErrInvalid)
	}
	return checkParams("model params", m.Params)
}

// NormaliseParams returns "{}" for empty parameters, else p unchanged.
func NormaliseParams(p json.RawMessage) json.RawMessage {
	if len(bytes.TrimSpace(p)) == 0 {
		return json.RawMessage("{}")
	}
	return p
}

func checkParams(field string, p json.RawMessage) error {
	p = NormaliseParams(p)
	if len(p) > MaxParamsBytes {
		return fmt.Errorf("%w: %s are longer than %d bytes", ErrInvalid, field, MaxParamsBytes)
	}
	if !json.Valid(p) {
		return fmt.Errorf("%w: %s are not valid JSON", ErrInvalid, field)
	}
	if t := bytes.TrimSpace(p); t[0] != '{' {
		return fmt.Errorf("%w: %s must be a JSON object", ErrInvalid, field)
	}
	if err := checkText(field, string(p), MaxParamsBytes, false); err != nil {
		return err
	}
	if bytes.Contains(p, []byte(`\u0000`)) {
		// PostgreSQL's json type accepts the escape but cannot convert it to text.
		return fmt.Errorf("%w: %s must not contain the escape \\u0000", ErrInvalid, field)
	}
	return nil
}

// ValidateTokenName checks a token name.
func ValidateTokenName(name string) error {
	return checkText("token name", name, MaxNameLen, true)
}
