package store

import (
	"encoding/json"
	"fmt"

	"github.com/paulmach/orb"
)

// Validate checks the caller-supplied fields of a plan (not times or version).
func (p Plan) Validate() error {
	if err := checkOptionalID("plan id", p.ID); err != nil {
		return err
	}
	if err := checkText("plan name", p.Name, MaxNameLen, true); err != nil {
		return err
	}
	if err := checkText("plan description", p.Description, MaxDescriptionLen, false); err != nil {
		return err
	}
	if len(p.Lines) == 0 {
		return fmt.Errorf("%w: a plan needs at least one line", ErrInvalid)
	}
	if len(p.Lines) > MaxPlanLines {
		return fmt.Errorf("%w: a plan has at most %d lines", ErrInvalid, MaxPlanLines)
	}
	n := 0
	for i, l := range p.Lines {
		field := fmt.Sprintf("plan line %d", i)
		if err := checkText(field+" name", l.Name, MaxNameLen, false); err != nil {
			return err
		}
		if len(l.Waypoints) < 2 {
			return fmt.Errorf("%w: %s needs at least two waypoints", ErrInvalid, field)
		}
		if l.WaypointNames != nil && len(l.WaypointNames) != len(l.Waypoints) {
			return fmt.Errorf("%w: %s has %d waypoint names for %d waypoints", ErrInvalid, field, len(l.WaypointNames), len(l.Waypoints))
		}
		for _, pt := range l.Waypoints {
			if err := checkPosition(field, pt); err != nil {
				return err
			}
		}
		for _, name := range l.WaypointNames {
			if err := checkText(field+" waypoint name", name, MaxNameLen, false); err != nil {
				return err
			}
		}
		n += len(l.Waypoints)
	}
	if n > MaxVertices {
		return fmt.Errorf("%w: a plan has at most %d waypoints", ErrInvalid, MaxVertices)
	}
	return checkParams("plan settings", p.Settings)
}

// PrepareCreate readies p for CreatePlan (see the Prepare methods): it also gives p its own
// copy of Lines with all-empty waypoint names made nil, and "{}" for empty Settings.
func (p *Plan) PrepareCreate() error {
	if err := p.Validate(); err != nil {
		return err
	}
	p.ID, p.CreatedAt, p.UpdatedAt, p.Version = newRow(p.ID, PrefixPlan)
	p.normalise()
	return nil
}

// PrepareUpdate readies p for UpdatePlan (see the Prepare methods). An id that could never have
// been stored is ErrNotFound, as GetPlan answers for it.
func (p *Plan) PrepareUpdate() error {
	if p.ID != "" {
		if err := LookupID("plan", p.ID); err != nil {
			return err
		}
	}
	if err := checkUpdate("plan", p.ID, p.Validate); err != nil {
		return err
	}
	p.normalise()
	p.UpdatedAt = Now()
	return nil
}

func (p *Plan) normalise() {
	lines := make([]PlanLine, len(p.Lines))
	for i, l := range p.Lines {
		lines[i] = PlanLine{Name: l.Name, Waypoints: l.Waypoints, WaypointNames: normaliseNames(l.WaypointNames)}
	}
	p.Lines = lines
	p.Settings = NormaliseParams(p.Settings)
}

func normaliseNames(names []string) []string {
	for _, n := range names {
		if n != "" {
			return names
		}
	}
	return nil
}

// LookupID returns nil when id could name a stored row, and otherwise an ErrNotFound for the
// entity named what: an id that is not a valid id (invalid UTF-8 included) is never sent to a
// database, where it could only fail as an encoding error.
func LookupID(what, id string) error {
	if ValidateID(id) != nil {
		return fmt.Errorf("%s %q: %w", what, id, ErrNotFound)
	}
	return nil
}

// Geometry returns the plan's lines as one MultiLineString, a line per plan line in order
// (the positions are shared with p).
func (p Plan) Geometry() orb.MultiLineString {
	ml := make(orb.MultiLineString, len(p.Lines))
	for i, l := range p.Lines {
		ml[i] = l.Waypoints
	}
	return ml
}

// planLineNames is the stored form of a plan line's names.
type planLineNames struct {
	Name          string   `json:"name"`
	WaypointNames []string `json:"waypoint_names,omitempty"`
}

// PlanNamesJSON encodes the line and waypoint names of p's lines as the JSON array both
// backends store beside the geometry: one {"name", "waypoint_names"} object per line.
func PlanNamesJSON(p Plan) (string, error) {
	names := make([]planLineNames, len(p.Lines))
	for i, l := range p.Lines {
		names[i] = planLineNames{Name: l.Name, WaypointNames: l.WaypointNames}
	}
	b, err := json.Marshal(names)
	if err != nil {
		return "", fmt.Errorf("%w: plan names: %v", ErrInvalid, err)
	}
	return string(b), nil
}

// PlanLinesFromStored rebuilds a plan's lines from its stored geometry (WKB of a
// MultiLineString) and names (PlanNamesJSON).
func PlanLinesFromStored(geomWKB, namesJSON []byte) ([]PlanLine, error) {
	ml, err := fromWKB[orb.MultiLineString](geomWKB)
	if err != nil {
		return nil, err
	}
	var names []planLineNames
	if err := json.Unmarshal(namesJSON, &names); err != nil {
		return nil, fmt.Errorf("plan names: %w", err)
	}
	if len(names) != len(ml) {
		return nil, fmt.Errorf("plan names: %d entries for %d lines", len(names), len(ml))
	}
	lines := make([]PlanLine, len(ml))
	for i, ls := range ml {
		wn := normaliseNames(names[i].WaypointNames)
		if wn != nil && len(wn) != len(ls) {
			return nil, fmt.Errorf("plan names: line %d has %d waypoint names for %d waypoints", i, len(wn), len(ls))
		}
		lines[i] = PlanLine{Name: names[i].Name, Waypoints: ls, WaypointNames: wn}
	}
	return lines, nil
}
