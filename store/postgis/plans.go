package postgis

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"ridgeflank/store"
)

const planCols = `id, name, description, ST_AsBinary(lines), line_names::text, settings::text, created_at, updated_at, version`

func scanPlan(row pgx.Row) (store.Plan, error) {
	var p store.Plan
	var geom []byte
	var names, settings string
	if err := row.Scan(&p.ID, &p.Name, &p.Description, &geom, &names, &settings, &p.CreatedAt, &p.UpdatedAt, &p.Version); err != nil {
		return p, err
	}
	lines, err := store.PlanLinesFromStored(geom, []byte(names))
	if err != nil {
		return p, fmt.Errorf("plan %s: %w", p.ID, err)
	}
	p.Lines = lines
	p.Settings = json.RawMessage(settings)
	p.CreatedAt, p.UpdatedAt = p.CreatedAt.UTC(), p.UpdatedAt.UTC()
	return p, nil
}

// planColumns encodes the geometry (GeoJSON for ST_GeomFromGeoJSON) and names of p.
func planColumns(p store.Plan) (string, string, error) {
	gj, err := geoJSON(p.Geometry())
	if err != nil {
		return "", "", err
	}
	names, err := store.PlanNamesJSON(p)
	return gj, names, err
}

// CreatePlan implements store.Store.
func (s *Store) CreatePlan(ctx context.Context, p store.Plan) (_ store.Plan, err error) {
	defer unavailable(&err)
	if err := p.PrepareCreate(); err != nil {
		return store.Plan{}, err
	}
	gj, names, err := planColumns(p)
	if err != nil {
		return store.Plan{}, err
	}
	_, err = s.pool.Exec(ctx, `INSERT INTO plans (id, name, description, lines, line_names, settings, created_at, updated_at, version)
		VALUES ($1, $2, $3, ST_SetSRID(ST_GeomFromGeoJSON($4::text), 4326), $5::text::jsonb, $6::text::json, $7, $8, $9)`,
		p.ID, p.Name, p.Description, gj, names, string(p.Settings), p.CreatedAt, p.UpdatedAt, p.Version)
	if err != nil {
		return store.Plan{}, fmt.Errorf("creating plan: %w", mapErr(err))
	}
	return p, nil
}

// GetPlan implements store.Store.
func (s *Store) GetPlan(ctx context.Context, id string) (_ store.Plan, err error) {
	defer unavailable(&err)
	if err := store.LookupID("plan", id); err != nil {
		return store.Plan{}, err
	}
	return getByID(ctx, s, scanPlan, "plan", id, `SELECT `+planCols+` FROM plans WHERE id = $1`)
}

// ListPlans implements store.Store.
func (s *Store) ListPlans(ctx context.Context, p store.Page) (_ []store.Plan, err error) {
	defer unavailable(&err)
	return listPage(ctx, s, scanPlan, "plans", `SELECT `+planCols+` FROM plans ORDER BY created_at, id LIMIT $1 OFFSET $2`, p)
}

// UpdatePlan implements store.Store.
func (s *Store) UpdatePlan(ctx context.Context, p store.Plan) (_ store.Plan, err error) {
	defer unavailable(&err)
	if err := p.PrepareUpdate(); err != nil {
		return store.Plan{}, err
	}
	gj, names, err := planColumns(p)
	if err != nil {
		return store.Plan{}, err
	}
	expected := p.Version
	err = s.pool.QueryRow(ctx, `UPDATE plans SET name = $2, description = $3, lines = ST_SetSRID(ST_GeomFromGeoJSON($4::text), 4326),
		line_names = $5::text::jsonb, settings = $6::text::json, updated_at = $7, version = version + 1
		WHERE id = $1 AND version = $8 RETURNING created_at, version`,
		p.ID, p.Name, p.Description, gj, names, string(p.Settings), p.UpdatedAt, expected).Scan(&p.CreatedAt, &p.Version)
	if errors.Is(err, pgx.ErrNoRows) {
		return store.Plan{}, fmt.Errorf("updating plan: %w", versionCheck(ctx, s.pool, "plans", "plan", p.ID, expected))
	}
	if err != nil {
		return store.Plan{}, fmt.Errorf("updating plan: %w", mapErr(err))
	}
	p.CreatedAt = p.CreatedAt.UTC()
	return p, nil
}

// DeletePlan implements store.Store.
func (s *Store) DeletePlan(ctx context.Context, id string, expectedVersion int64) (err error) {
	defer unavailable(&err)
	if err := store.LookupID("plan", id); err != nil {
		return err
	}
	return s.deleteVersioned(ctx, "plans", "plan", id, expectedVersion)
}
