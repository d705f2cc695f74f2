package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"

	"github.com/paulmach/orb/encoding/wkb"

	"ridgeflank/store"
)

const planCols = `id, name, description, lines, line_names, settings, created_at, updated_at, version`

func scanPlan(sc scanner) (store.Plan, error) {
	var p store.Plan
	var geom []byte
	var names, settings string
	var created, updated int64
	if err := sc.Scan(&p.ID, &p.Name, &p.Description, &geom, &names, &settings, &created, &updated, &p.Version); err != nil {
		return p, err
	}
	lines, err := store.PlanLinesFromStored(geom, []byte(names))
	if err != nil {
		return p, fmt.Errorf("plan %s: %w", p.ID, err)
	}
	p.Lines = lines
	p.Settings = json.RawMessage(settings)
	p.CreatedAt, p.UpdatedAt = fromMicros(created), fromMicros(updated)
	return p, nil
}

// planColumns encodes the geometry and names of p for its row.
func planColumns(p store.Plan) ([]byte, string, error) {
	geom, err := wkb.Marshal(p.Geometry())
	if err != nil {
		return nil, "", fmt.Errorf("%w: plan lines: %v", store.ErrInvalid, err)
	}
	names, err := store.PlanNamesJSON(p)
	return geom, names, err
}

// CreatePlan implements store.Store.
func (s *Store) CreatePlan(ctx context.Context, p store.Plan) (store.Plan, error) {
	if err := p.PrepareCreate(); err != nil {
		return store.Plan{}, err
	}
	geom, names, err := planColumns(p)
	if err != nil {
		return store.Plan{}, err
	}
	err = s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO plans (`+planCols+`) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			p.ID, p.Name, p.Description, geom, names, string(p.Settings), micros(p.CreatedAt), micros(p.UpdatedAt), p.Version)
		return mapErr(err)
	})
	if err != nil {
		return store.Plan{}, fmt.Errorf("creating plan: %w", err)
	}
	return p, nil
}

// GetPlan implements store.Store.
func (s *Store) GetPlan(ctx context.Context, id string) (store.Plan, error) {
	if err := store.LookupID("plan", id); err != nil {
		return store.Plan{}, err
	}
	return getByID(ctx, s, scanPlan, "plan", id, `SELECT `+planCols+` FROM plans WHERE id = ?`)
}

// ListPlans implements store.Store.
func (s *Store) ListPlans(ctx context.Context, p store.Page) ([]store.Plan, error) {
	return listPage(ctx, s, scanPlan, "plans", `SELECT `+planCols+` FROM plans ORDER BY created_at, id LIMIT ? OFFSET ?`, p)
}

// UpdatePlan implements store.Store.
func (s *Store) UpdatePlan(ctx context.Context, p store.Plan) (store.Plan, error) {
	if err := p.PrepareUpdate(); err != nil {
		return store.Plan{}, err
	}
	geom, names, err := planColumns(p)
	if err != nil {
		return store.Plan{}, err
	}
	expected := p.Version
	err = s.write(ctx, func(tx *sql.Tx) error {
		var created int64
		err := tx.QueryRowContext(ctx, `UPDATE plans SET name = ?, description = ?, lines = ?, line_names = ?, settings = ?, updated_at = ?,
			version = version + 1 WHERE id = ? AND version = ? RETURNING created_at, version`,
			p.Name, p.Description, geom, names, string(p.Settings), micros(p.UpdatedAt), p.ID, expected).Scan(&created, &p.Version)
		if errors.Is(err, sql.ErrNoRows) {
			return versionCheck(ctx, tx, "plans", "plan", p.ID, expected)
		}
		if err != nil {
			return mapErr(err)
		}
		p.CreatedAt = fromMicros(created)
		return nil
	})
	if err != nil {
		return store.Plan{}, fmt.Errorf("updating plan: %w", err)
	}
	return p, nil
}

// DeletePlan implements store.Store.
func (s *Store) DeletePlan(ctx context.Context, id string, expectedVersion int64) error {
	if err := store.LookupID("plan", id); err != nil {
		return err
	}
	return s.deleteVersioned(ctx, "plans", "plan", id, expectedVersion)
}
