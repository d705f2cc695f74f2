package evaluate

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"unicode/utf8"

	"ridgeflank/fault"
	"ridgeflank/store"
	"ridgeflank/survey"
	"ridgeflank/thermal"
)

// Stored survey plans. Every way in (HTTP /api/plans, the command line, the page) creates,
// reads, lists, updates and deletes plans through these methods, so a stored plan always
// passes the rules a checked one does. Store errors come back as the store gives them
// (store.ErrNotFound, store.ErrConflict, store.ErrVersionMismatch for a stale expected
// version, store.ErrInvalid), as they do for regions.

// CreatePlan validates p (checkStoredPlan) and stores it as a new plan: p.ID is kept when given
// (a duplicate is store.ErrConflict) or made up, p.Version and the times are ignored. It
// returns the plan as stored, version 1, with its times.
func (s *Service) CreatePlan(ctx context.Context, p survey.Plan) (survey.Plan, error) {
	if p.ID != "" {
		if err := store.ValidateID(p.ID); err != nil {
			return survey.Plan{}, fault.New(fault.InvalidParameter, "id", "%v", err)
		}
	}
	row, err := s.checkStoredPlan(ctx, p)
	if err != nil {
		return survey.Plan{}, err
	}
	out, err := s.st.CreatePlan(ctx, row)
	if err != nil {
		return survey.Plan{}, err
	}
	return survey.FromStored(out)
}

// GetPlan returns the stored plan id (store.ErrNotFound when there is none).
func (s *Service) GetPlan(ctx context.Context, id string) (survey.Plan, error) {
	if s.st == nil {
		return survey.Plan{}, noPlanStore(id)
	}
	row, err := s.st.GetPlan(ctx, id)
	if err != nil {
		return survey.Plan{}, err
	}
	return survey.FromStored(row)
}

// ListPlans returns one page of the stored plans, in the order they were created.
func (s *Service) ListPlans(ctx context.Context, page store.Page) ([]survey.Plan, error) {
	if s.st == nil {
		return []survey.Plan{}, nil
	}
	rows, err := s.st.ListPlans(ctx, page)
	if err != nil {
		return nil, err
	}
	out := make([]survey.Plan, 0, len(rows))
	for _, r := range rows {
		p, err := survey.FromStored(r)
		if err != nil {
			return nil, err
		}
		out = append(out, p)
	}
	return out, nil
}

// UpdatePlan replaces the stored plan p.ID with p, validated as CreatePlan validates. p.Version
// is the version the caller last read (an HTTP If-Match): when the stored plan has moved on the
// answer is store.ErrVersionMismatch and nothing changes. An id no plan could have is
// store.ErrNotFound, as GetPlan answers. It returns the plan as stored, its version one more.
func (s *Service) UpdatePlan(ctx context.Context, p survey.Plan) (survey.Plan, error) {
	if p.ID == "" {
		return survey.Plan{}, fault.New(fault.InvalidParameter, "id", "updating a plan needs its id")
	}
	if err := store.LookupID("plan", p.ID); err != nil {
		return survey.Plan{}, err
	}
	row, err := s.checkStoredPlan(ctx, p)
	if err != nil {
		return survey.Plan{}, err
	}
	out, err := s.st.UpdatePlan(ctx, row)
	if err != nil {
		return survey.Plan{}, err
	}
	return survey.FromStored(out)
}

// DeletePlan removes the stored plan id if its version is expectedVersion (0: whatever the
// version); otherwise store.ErrVersionMismatch, or store.ErrNotFound when there is no such plan.
func (s *Service) DeletePlan(ctx context.Context, id string, expectedVersion int64) error {
	if s.st == nil {
		return noPlanStore(id)
	}
	return s.st.DeletePlan(ctx, id, expectedVersion)
}

func noPlanStore(id string) error {
	return fmt.Errorf("plan %q: %w (there is no store)", id, store.ErrNotFound)
}

// checkStoredPlan applies the rules of a stored plan and returns its stored form: a non-empty
// name (fault.InvalidParameter "name") and text the store can keep; the rules of every plan
// (survey.Plan.Validate under Limits.MaxPlanLines and Limits.MaxVertices); a dataset that
// exists (fault.NotFound "settings.dataset"); a known model (fault.UnknownModel
// "settings.model") and compaction law (fault.UnknownSediment "settings.sediment") when given.
// Settings are stored as given, without the defaults, so a plan keeps meaning "the default"
// where it said nothing.
func (s *Service) checkStoredPlan(ctx context.Context, p survey.Plan) (store.Plan, error) {
	if strings.TrimSpace(p.Name) == "" {
		return store.Plan{}, fault.New(fault.InvalidParameter, "name", "a stored plan needs a name")
	}
	for _, f := range []struct {
		field, text string
		max         int
	}{{"name", p.Name, store.MaxNameLen}, {"description", p.Description, store.MaxDescriptionLen}} {
		if err := checkPlanText(f.field, f.text, f.max); err != nil {
			return store.Plan{}, err
		}
	}
	for i, l := range p.Lines {
		if err := checkPlanText(fmt.Sprintf("lines[%d].name", i), l.Name, store.MaxNameLen); err != nil {
			return store.Plan{}, err
		}
		for j, w := range l.Waypoints {
			if err := checkPlanText(fmt.Sprintf("lines[%d].waypoints[%d].name", i, j), w.Name, store.MaxNameLen); err != nil {
				return store.Plan{}, err
			}
		}
	}
	if err := p.Validate(s.limits.MaxPlanLines, s.limits.MaxVertices); err != nil {
		return store.Plan{}, err
	}
	ds := p.Settings.Dataset
	if s.st == nil {
		return store.Plan{}, fault.New(fault.NotFound, "settings.dataset", "no dataset (collection) %q: there is no store", ds)
	}
	if store.ValidateID(ds) != nil {
		return store.Plan{}, fault.New(fault.NotFound, "settings.dataset", "no dataset (collection) %q", ds)
	}
	if _, err := s.st.GetDataset(ctx, ds); err != nil {
		if errors.Is(err, store.ErrNotFound) {
			return store.Plan{}, fault.New(fault.NotFound, "settings.dataset", "no dataset (collection) %q%w", ds, quiet(err))
		}
		return store.Plan{}, err
	}
	if p.Settings.Model != "" {
		if _, err := s.Model(ctx, p.Settings.Model); err != nil {
			return store.Plan{}, refield(err, "settings.model")
		}
	}
	if p.Settings.Sediment != "" {
		if _, err := thermal.CompactionByName(p.Settings.Sediment); err != nil {
			return store.Plan{}, fault.New(fault.UnknownSediment, "settings.sediment", "%v", err)
		}
	}
	return p.ToStored()
}

// checkPlanText: UTF-8 text without NUL of at most max bytes, or a fault.InvalidParameter.
func checkPlanText(field, s string, max int) error {
	switch {
	case len(s) > max:
		return fault.New(fault.InvalidParameter, field, "%s is longer than %d bytes", field, max)
	case !utf8.ValidString(s) || strings.IndexByte(s, 0) >= 0:
		return fault.New(fault.InvalidParameter, field, "%s must be UTF-8 text without NUL characters", field)
	}
	return nil
}

// refield returns err with its fault's field set to field (other errors unchanged).
func refield(err error, field string) error {
	if f, ok := fault.As(err); ok {
		g := *f
		g.Field = field
		return &g
	}
	return err
}
