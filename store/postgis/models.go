package postgis

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"ridgeflank/store"
)

const modelCols = `id, name, description, params::text, created_at, updated_at, version`

func scanModel(row pgx.Row) (store.Model, error) {
	var m store.Model
	var params string
	if err := row.Scan(&m.ID, &m.Name, &m.Description, &params, &m.CreatedAt, &m.UpdatedAt, &m.Version); err != nil {
		return m, err
	}
	m.Params = json.RawMessage(params)
	m.CreatedAt, m.UpdatedAt = m.CreatedAt.UTC(), m.UpdatedAt.UTC()
	return m, nil
}

// CreateModel implements store.Store.
func (s *Store) CreateModel(ctx context.Context, m store.Model) (_ store.Model, err error) {
	defer unavailable(&err)
	if err := m.PrepareCreate(); err != nil {
		return store.Model{}, err
	}
	_, err = s.pool.Exec(ctx, `INSERT INTO custom_models (id, name, description, params, created_at, updated_at, version)
		VALUES ($1, $2, $3, $4::text::json, $5, $6, $7)`,
		m.ID, m.Name, m.Description, string(m.Params), m.CreatedAt, m.UpdatedAt, m.Version)
	if err != nil {
		return store.Model{}, fmt.Errorf("creating model: %w", mapErr(err))
	}
	return m, nil
}

// GetModel implements store.Store.
func (s *Store) GetModel(ctx context.Context, id string) (_ store.Model, err error) {
	defer unavailable(&err)
	if err := store.LookupID("model", id); err != nil {
		return store.Model{}, err
	}
	return getByID(ctx, s, scanModel, "model", id, `SELECT `+modelCols+` FROM custom_models WHERE id = $1`)
}

// ListModels implements store.Store.
func (s *Store) ListModels(ctx context.Context, p store.Page) (_ []store.Model, err error) {
	defer unavailable(&err)
	return listPage(ctx, s, scanModel, "models", `SELECT `+modelCols+` FROM custom_models ORDER BY created_at, id LIMIT $1 OFFSET $2`, p)
}

// UpdateModel implements store.Store.
func (s *Store) UpdateModel(ctx context.Context, m store.Model) (_ store.Model, err error) {
	defer unavailable(&err)
	if err := store.LookupID("model", m.ID); err != nil {
		return store.Model{}, err
	}
	if err := m.PrepareUpdate(); err != nil {
		return store.Model{}, err
	}
	expected := m.Version
	err = s.pool.QueryRow(ctx, `UPDATE custom_models SET name = $2, description = $3, params = $4::text::json, updated_at = $5,
		version = version + 1 WHERE id = $1 AND version = $6 RETURNING created_at, version`,
		m.ID, m.Name, m.Description, string(m.Params), m.UpdatedAt, expected).Scan(&m.CreatedAt, &m.Version)
	if errors.Is(err, pgx.ErrNoRows) {
		return store.Model{}, fmt.Errorf("updating model: %w", versionCheck(ctx, s.pool, "custom_models", "model", m.ID, expected))
	}
	if err != nil {
		return store.Model{}, fmt.Errorf("updating model: %w", mapErr(err))
	}
	m.CreatedAt = m.CreatedAt.UTC()
	return m, nil
}

// DeleteModel implements store.Store.
func (s *Store) DeleteModel(ctx context.Context, id string, expectedVersion int64) (err error) {
	defer unavailable(&err)
	if err := store.LookupID("model", id); err != nil {
		return err
	}
	return s.deleteVersioned(ctx, "custom_models", "model", id, expectedVersion)
}
