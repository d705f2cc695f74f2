package store

import (
	"fmt"
	"time"

	"github.com/paulmach/orb"
)

// The Prepare methods are the checks and fields every backend applies before it writes a
// versioned entity. PrepareCreate validates the entity and fills in a new id when ID is empty,
// CreatedAt and UpdatedAt (now) and Version 1. PrepareUpdate requires an id, validates the
// entity and sets UpdatedAt (now); Version is left as the caller's expected version.
// Regions also get non-nil Tags, tracks "{}" for empty Params.

// newRow is what a create fills in: id, or a new one with prefix when empty; the creation
// and update times (now); version 1.
func newRow(id, prefix string) (string, time.Time, time.Time, int64) {
	if id == "" {
		id = NewID(prefix)
	}
	now := Now()
	return id, now, now, 1
}

// checkUpdate requires an id, then runs validate.
func checkUpdate(what, id string, validate func() error) error {
	if id == "" {
		return fmt.Errorf("%w: %s id is required", ErrInvalid, what)
	}
	return validate()
}

// PrepareCreate readies r for CreateRegion (see above).
func (r *Region) PrepareCreate() error {
	if err := r.Validate(); err != nil {
		return err
	}
	r.ID, r.CreatedAt, r.UpdatedAt, r.Version = newRow(r.ID, PrefixRegion)
	r.Tags = NormaliseTags(r.Tags)
	return nil
}

// PrepareUpdate readies r for UpdateRegion (see above).
func (r *Region) PrepareUpdate() error {
	if err := checkUpdate("region", r.ID, r.Validate); err != nil {
		return err
	}
	r.Tags = NormaliseTags(r.Tags)
	r.UpdatedAt = Now()
	return nil
}

// PrepareCreate readies d for CreateDataset (see above).
func (d *Dataset) PrepareCreate() error {
	if err := d.Validate(); err != nil {
		return err
	}
	d.ID, d.CreatedAt, d.UpdatedAt, d.Version = newRow(d.ID, PrefixDataset)
	return nil
}

// PrepareUpdate readies d for UpdateDataset (see above).
func (d *Dataset) PrepareUpdate() error {
	if err := checkUpdate("dataset", d.ID, d.Validate); err != nil {
		return err
	}
	d.UpdatedAt = Now()
	return nil
}

// PrepareCreate readies t for CreateTrack (see above).
func (t *Track) PrepareCreate() error {
	if err := t.Validate(); err != nil {
		return err
	}
	t.ID, t.CreatedAt, t.UpdatedAt, t.Version = newRow(t.ID, PrefixTrack)
	t.Params = NormaliseParams(t.Params)
	return nil
}

// PrepareUpdate readies t for UpdateTrack (see above).
func (t *Track) PrepareUpdate() error {
	if err := checkUpdate("track", t.ID, t.Validate); err != nil {
		return err
	}
	t.Params = NormaliseParams(t.Params)
	t.UpdatedAt = Now()
	return nil
}

// PrepareCreate readies m for CreateModel (see above).
func (m *Model) PrepareCreate() error {
	if err := m.Validate(); err != nil {
		return err
	}
	m.ID, m.CreatedAt, m.UpdatedAt, m.Version = newRow(m.ID, PrefixModel)
	return nil
}

// PrepareUpdate readies m for UpdateModel (see above).
func (m *Model) PrepareUpdate() error {
	if err := checkUpdate("model", m.ID, m.Validate); err != nil {
		return err
	}
	m.UpdatedAt = Now()
	return nil
}

// Prepare checks f (page and kind) and returns its box split at the antimeridian
// (SplitBBox), or nil when f has no box.
func (f GridFilter) Prepare() ([]orb.Bound, error) {
	if err := f.Page.Validate(); err != nil {
		return nil, err
	}
	if f.Kind != "" && !f.Kind.Valid() {
		return nil, fmt.Errorf("%w: grid kind %q", ErrInvalid, f.Kind)
	}
	return splitOptionalBBox(f.BBox)
}

// Prepare checks f (page, tag and query geometry) and returns its box split at the
// antimeridian (SplitBBox), or nil when f has no box. A tag no region can carry (not UTF-8, a
// NUL, longer than MaxTagLen) is ErrInvalid on every backend (PostgreSQL refuses such text).
func (f RegionFilter) Prepare() ([]orb.Bound, error) {
	if err := f.Page.Validate(); err != nil {
		return nil, err
	}
	if err := checkText("tag", f.Tag, MaxTagLen, false); err != nil {
		return nil, err
	}
	boxes, err := splitOptionalBBox(f.BBox)
	if err != nil {
		return nil, err
	}
	if f.Intersects != nil {
		if err := ValidateQueryGeometry(f.Intersects); err != nil {
			return nil, err
		}
	}
	return boxes, nil
}

func splitOptionalBBox(b *orb.Bound) ([]orb.Bound, error) {
	if b == nil {
		return nil, nil
	}
	return SplitBBox(*b)
}
