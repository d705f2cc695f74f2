package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"

	"ridgeflank/store"
)

const datasetCols = `id, name, description, age_grid_id, depth_grid_id, sediment_grid_id, crust_grid_id, age_uncertainty_grid_id, created_at, updated_at, version`

func scanDataset(sc scanner) (store.Dataset, error) {
	var d store.Dataset
	var depth, sed, crust, unc sql.NullString
	var created, updated int64
	if err := sc.Scan(&d.ID, &d.Name, &d.Description, &d.AgeGridID, &depth, &sed, &crust, &unc, &created, &updated, &d.Version); err != nil {
		return d, err
	}
	d.DepthGridID, d.SedimentGridID, d.CrustGridID, d.AgeUncertaintyGridID = depth.String, sed.String, crust.String, unc.String
	d.CreatedAt, d.UpdatedAt = fromMicros(created), fromMicros(updated)
	return d, nil
}

// checkDatasetGrids verifies, inside the write transaction, that the grids exist with fitting kinds.
func checkDatasetGrids(ctx context.Context, tx *sql.Tx, d store.Dataset) error {
	ids := d.GridIDs()
	args := make([]any, len(ids))
	for i, id := range ids {
		args[i] = id
	}
	rows, err := tx.QueryContext(ctx, `SELECT id, kind FROM grids WHERE id IN (?`+strings.Repeat(", ?", len(ids)-1)+`)`, args...)
	if err != nil {
		return err
	}
	defer rows.Close()
	kinds := map[string]store.GridKind{}
	for rows.Next() {
		var id string
		var k store.GridKind
		if err := rows.Scan(&id, &k); err != nil {
			return err
		}
		kinds[id] = k
	}
	if err := rows.Err(); err != nil {
		return err
	}
	return d.CheckGridKinds(kinds)
}

// CreateDataset implements store.Store.
func (s *Store) CreateDataset(ctx context.Context, d store.Dataset) (store.Dataset, error) {
	if err := d.PrepareCreate(); err != nil {
		return store.Dataset{}, err
	}
	err := s.write(ctx, func(tx *sql.Tx) error {
		if err := checkDatasetGrids(ctx, tx, d); err != nil {
			return err
		}
		_, err := tx.ExecContext(ctx, `INSERT INTO datasets (`+datasetCols+`) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			d.ID, d.Name, d.Description, d.AgeGridID, nullStr(d.DepthGridID), nullStr(d.SedimentGridID), nullStr(d.CrustGridID),
			nullStr(d.AgeUncertaintyGridID), micros(d.CreatedAt), micros(d.UpdatedAt), d.Version)
		return mapErr(err)
	})
	if err != nil {
		return store.Dataset{}, fmt.Errorf("creating dataset: %w", err)
	}
	return d, nil
}

// GetDataset implements store.Store.
func (s *Store) GetDataset(ctx context.Context, id string) (store.Dataset, error) {
	return getByID(ctx, s, scanDataset, "dataset", id, `SELECT `+datasetCols+` FROM datasets WHERE id = ?`)
}

// ListDatasets implements store.Store.
func (s *Store) ListDatasets(ctx context.Context, p store.Page) ([]store.Dataset, error) {
	return listPage(ctx, s, scanDataset, "datasets", `SELECT `+datasetCols+` FROM datasets ORDER BY created_at, id LIMIT ? OFFSET ?`, p)
}

// UpdateDataset implements store.Store.
func (s *Store) UpdateDataset(ctx context.Context, d store.Dataset) (store.Dataset, error) {
	if err := d.PrepareUpdate(); err != nil {
		return store.Dataset{}, err
	}
	expected := d.Version
	err := s.write(ctx, func(tx *sql.Tx) error {
		if err := checkDatasetGrids(ctx, tx, d); err != nil {
			return err
		}
		var created int64
		err := tx.QueryRowContext(ctx, `UPDATE datasets SET name = ?, description = ?, age_grid_id = ?, depth_grid_id = ?, sediment_grid_id = ?,
			crust_grid_id = ?, age_uncertainty_grid_id = ?, updated_at = ?, version = version + 1
			WHERE id = ? AND version = ? RETURNING created_at, version`,
			d.Name, d.Description, d.AgeGridID, nullStr(d.DepthGridID), nullStr(d.SedimentGridID), nullStr(d.CrustGridID),
			nullStr(d.AgeUncertaintyGridID), micros(d.UpdatedAt), d.ID, expected).Scan(&created, &d.Version)
		if errors.Is(err, sql.ErrNoRows) {
			return versionCheck(ctx, tx, "datasets", "dataset", d.ID, expected)
		}
		if err != nil {
			return mapErr(err)
		}
		d.CreatedAt = fromMicros(created)
		return nil
	})
	if err != nil {
		return store.Dataset{}, fmt.Errorf("updating dataset: %w", err)
	}
	return d, nil
}

// DeleteDataset implements store.Store.
func (s *Store) DeleteDataset(ctx context.Context, id string, expectedVersion int64) error {
	return s.deleteVersioned(ctx, "datasets", "dataset", id, expectedVersion)
}

func (s *Store) deleteVersioned(ctx context.Context, table, what, id string, expectedVersion int64) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `DELETE FROM `+table+` WHERE id = ? AND (? = 0 OR version = ?)`, id, expectedVersion, expectedVersion)
		if err != nil {
			return mapErr(err)
		}
		if n, err := res.RowsAffected(); err != nil {
			return err
		} else if n == 0 {
			return versionCheck(ctx, tx, table, what, id, expectedVersion)
		}
		return nil
	})
}
