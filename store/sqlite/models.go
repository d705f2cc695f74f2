package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"

	"ridgeflank/store"
)

const modelCols = `id, name, description, params, created_at, updated_at, version`

func scanModel(sc scanner) (store.Model, error) {
	var m store.Model
	var params string
	var created, updated int64
	if err := sc.Scan(&m.ID, &m.Name, &m.Description, &params, &created, &updated, &m.Version); err != nil {
		return m, err
	}
	m.Params = json.RawMessage(params)
	m.CreatedAt, m.UpdatedAt = fromMicros(created), fromMicros(updated)
	return m, nil
}

// CreateModel implements store.Store.
func (s *Store) CreateModel(ctx context.Context, m store.Model) (store.Model, error) {
	if err := m.PrepareCreate(); err != nil {
		return store.Model{}, err
	}
	err := s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO custom_models (`+modelCols+`) VALUES (?, ?, ?, ?, ?, ?, ?)`,
			m.ID, m.Name, m.Description, string(m.Params), micros(m.CreatedAt), micros(m.UpdatedAt), m.Version)
		return mapErr(err)
	})
	if err != nil {
		return store.Model{}, fmt.Errorf("creating model: %w", err)
	}
	return m, nil
}

// GetModel implements store.Store.
func (s *Store) GetModel(ctx context.Context, id string) (store.Model, error) {
	return getByID(ctx, s, scanModel, "model", id, `SELECT `+modelCols+` FROM custom_models WHERE id = ?`)
}

// ListModels implements store.Store.
func (s *Store) ListModels(ctx context.Context, p store.Page) ([]store.Model, error) {
	return listPage(ctx, s, scanModel, "models", `SELECT `+modelCols+` FROM custom_models ORDER BY created_at, id LIMIT ? OFFSET ?`, p)
}

// UpdateModel implements store.Store.
func (s *Store) UpdateModel(ctx context.Context, m store.Model) (store.Model, error) {
	if err := m.PrepareUpdate(); err != nil {
		return store.Model{}, err
	}
	expected := m.Version
	err := s.write(ctx, func(tx *sql.Tx) error {
		var created int64
		err := tx.QueryRowContext(ctx, `UPDATE custom_models SET name = ?, description = ?, params = ?, updated_at = ?, version = version + 1
			WHERE id = ? AND version = ? RETURNING created_at, version`,
			m.Name, m.Description, string(m.Params), micros(m.UpdatedAt), m.ID, expected).Scan(&created, &m.Version)
		if errors.Is(err, sql.ErrNoRows) {
			return versionCheck(ctx, tx, "custom_models", "model", m.ID, expected)
		}
		if err != nil {
			return mapErr(err)
		}
		m.CreatedAt = fromMicros(created)
		return nil
	})
	if err != nil {
		return store.Model{}, fmt.Errorf("updating model: %w", err)
	}
	return m, nil
}

// DeleteModel implements store.Store.
func (s *Store) DeleteModel(ctx context.Context, id string, expectedVersion int64) error {
	return s.deleteVersioned(ctx, "custom_models", "model", id, expectedVersion)
}
