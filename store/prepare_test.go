package store

import (
	"errors"
	"strings"
	"testing"

	"github.com/paulmach/orb"
)

// The Prepare methods against the contract documented on Store: versioned entities start at
// version 1 with equal creation and update times and a generated id when none is given; an
// update needs the id (ErrInvalid otherwise) and keeps the caller's expected version.
func TestPrepare(t *testing.T) {
	ring := orb.Ring{{0, 0}, {1, 0}, {1, 1}, {0, 0}}
	type entity interface {
		PrepareCreate() error
		PrepareUpdate() error
	}
	cases := []struct {
		name   string
		make   func() entity
		prefix string
		fields func(entity) (id string, version int64, created, updated string)
	}{
		{"region", func() entity {
			return &Region{Name: "Quillon north (SYNTHETIC)", Geometry: orb.MultiPolygon{{ring}}, Version: 7}
		}, PrefixRegion,
			func(e entity) (string, int64, string, string) {
				r := e.(*Region)
				return r.ID, r.Version, r.CreatedAt.String(), r.UpdatedAt.String()
			}},
		{"dataset", func() entity { return &Dataset{Name: "Quillon Basin (SYNTHETIC)", AgeGridID: "age1", Version: 7} }, PrefixDataset,
			func(e entity) (string, int64, string, string) {
				d := e.(*Dataset)
				return d.ID, d.Version, d.CreatedAt.String(), d.UpdatedAt.String()
			}},
		{"track", func() entity {
			return &Track{Name: "Line 1 (SYNTHETIC)", Waypoints: orb.LineString{{0, 0}, {1, 1}}, Version: 7}
		}, PrefixTrack,
			func(e entity) (string, int64, string, string) {
				tr := e.(*Track)
				return tr.ID, tr.Version, tr.CreatedAt.String(), tr.UpdatedAt.String()
			}},
		{"model", func() entity { return &Model{Name: "Quillon plate", Params: []byte(`{"a":1}`), Version: 7} }, PrefixModel,
			func(e entity) (string, int64, string, string) {
				m := e.(*Model)
				return m.ID, m.Version, m.CreatedAt.String(), m.UpdatedAt.String()
			}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			e := c.make()
			if err := e.PrepareUpdate(); !errors.Is(err, ErrInvalid) || !strings.Contains(err.Error(), c.name+" id is required") {
				t.Errorf("update without id: %v, want ErrInvalid naming the %s id", err, c.name)
			}
			if err := e.PrepareCreate(); err != nil {
				t.Fatal(err)
			}
			id, v, created, updated := c.fields(e)
			if !strings.HasPrefix(id, c.prefix) || v != 1 || created != updated {
				t.Errorf("after create: id %q version %d created %s updated %s; want prefix %s, version 1, equal times", id, v, created, updated, c.prefix)
			}
			e = c.make()
			if err := e.PrepareCreate(); err != nil {
				t.Fatal(err)
			}
			if err := e.PrepareUpdate(); err != nil {
				t.Fatal(err)
			}
		})
	}
	r := Region{ID: "r1", Name: "n", Geometry: orb.MultiPolygon{{ring}}, Version: 3}
	if err := r.PrepareUpdate(); err != nil || r.Tags == nil || r.Version != 3 || r.UpdatedAt.IsZero() {
		t.Errorf("region update: err %v, tags %v, version %d, updated %v", err, r.Tags, r.Version, r.UpdatedAt)
	}
	tr := Track{Name: "n", Waypoints: orb.LineString{{0, 0}, {1, 1}}}
	if err := tr.PrepareCreate(); err != nil || string(tr.Params) != "{}" {
		t.Errorf("track create: err %v, params %q, want {}", err, tr.Params)
	}
	if err := (&Dataset{Name: "n"}).PrepareCreate(); !errors.Is(err, ErrInvalid) {
		t.Errorf("dataset without age grid: %v, want ErrInvalid", err)
	}
}
