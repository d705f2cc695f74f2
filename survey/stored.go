package survey

import (
	"encoding/json"
	"fmt"

	"github.com/paulmach/orb"

	"ridgeflank/geo"
	"ridgeflank/store"
)

// ToStored returns p in the form the store keeps: each line's waypoints as an orb.LineString
// (longitudes as given, so a line across the antimeridian keeps its form), the line and
// waypoint names beside it, and Settings as its JSON encoding (the JSON of POST /api/plans).
// ID and Version are carried over (the expected version of an update); times are not.
// It does not validate p (see Plan.Validate).
func (p Plan) ToStored() (store.Plan, error) {
	settings, err := json.Marshal(p.Settings)
	if err != nil {
		return store.Plan{}, fmt.Errorf("plan settings: %w", err)
	}
	lines := make([]store.PlanLine, len(p.Lines))
	for i, l := range p.Lines {
		ls := make(orb.LineString, len(l.Waypoints))
		names := make([]string, len(l.Waypoints))
		named := false
		for j, w := range l.Waypoints {
			ls[j] = orb.Point{w.Lon, w.Lat}
			names[j] = w.Name
			named = named || w.Name != ""
		}
		if !named {
			names = nil
		}
		lines[i] = store.PlanLine{Name: l.Name, Waypoints: ls, WaypointNames: names}
	}
	return store.Plan{ID: p.ID, Name: p.Name, Description: p.Description, Lines: lines, Settings: settings, Version: p.Version}, nil
}

// FromStored returns the plan a stored row holds (the inverse of ToStored), with the row's
// version and times. Settings fields this version does not know are ignored.
func FromStored(r store.Plan) (Plan, error) {
	p := Plan{ID: r.ID, Name: r.Name, Description: r.Description, Version: r.Version, Lines: make([]Line, len(r.Lines))}
	if err := json.Unmarshal(r.Settings, &p.Settings); err != nil {
		return Plan{}, fmt.Errorf("stored plan %s: settings: %w", r.ID, err)
	}
	for i, l := range r.Lines {
		if l.WaypointNames != nil && len(l.WaypointNames) != len(l.Waypoints) {
			return Plan{}, fmt.Errorf("stored plan %s: line %d: %d waypoint names for %d waypoints", r.ID, i, len(l.WaypointNames), len(l.Waypoints))
		}
		wps := make([]geo.Waypoint, len(l.Waypoints))
		for j, pt := range l.Waypoints {
			wps[j] = geo.Waypoint{Lon: pt[0], Lat: pt[1]}
			if l.WaypointNames != nil {
				wps[j].Name = l.WaypointNames[j]
			}
		}
		p.Lines[i] = Line{Name: l.Name, Waypoints: wps}
	}
	if !r.CreatedAt.IsZero() {
		c, u := r.CreatedAt, r.UpdatedAt
		p.CreatedAt, p.UpdatedAt = &c, &u
	}
	return p, nil
}
