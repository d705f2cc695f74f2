package postgis

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"ridgeflank/store"
)

const datasetCols = `id, name, description, age_grid_id, depth_grid_id, sediment_grid_id, crust_grid_id, age_uncertainty_grid_id, created_at, updated_at, version`

func scanDataset(row pgx.Row) (store.Dataset, error) {
	var d store.Dataset
	var depth, sed, crust, unc *string
	if err := row.Scan(&d.ID, &d.Name, &d.Description, &d.AgeGridID, &depth, &sed, &crust, &unc, &d.CreatedAt, &d.UpdatedAt, &d.Version); err != nil {
		return d, err
	}
	d.DepthGridID, d.SedimentGridID, d.CrustGridID, d.AgeUncertaintyGridID = deref(depth), deref(sed), deref(crust), deref(unc)
	d.CreatedAt, d.UpdatedAt = d.CreatedAt.UTC(), d.UpdatedAt.UTC()
	return d, nil
}

// checkDatasetGrids verifies inside tx that the grids exist with fitting kinds, and locks them
// (FOR SHARE) so that they cannot be deleted before the transaction commits.
func checkDatasetGrids(ctx context.Context, tx pgx.Tx, d store.Dataset) error {
	rows, err := tx.Query(ctx, `SELECT id, kind FROM grids WHERE id = ANY($1) FOR SHARE`, d.GridIDs())
	if err != nil {
		return err
	}
	defer rows.Close()
	kinds := map[string]store.GridKind{}
	for rows.Next() {
		var id, k string
		if err := rows.Scan(&id, &k); err != nil {
			return err
		}
		kinds[id] = store.GridKind(k)
	}
	if err := rows.Err(); err != nil {
		return err
	}
	return d.CheckGridKinds(kinds)
}

// CreateDataset implements store.Store.
func (s *Store) CreateDataset(ctx context.Context, d store.Dataset) (_ store.Dataset, err error) {
	defer unavailable(&err)
	if err := d.PrepareCreate(); err != nil {
		return store.Dataset{}, err
	}
	err = pgx.BeginFunc(ctx, s.pool, func(tx pgx.Tx) error {
		if err := checkDatasetGrids(ctx, tx, d); err != nil {
			return err
		}
		_, err := tx.Exec(ctx, `INSERT INTO datasets (`+datasetCols+`) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11)`,
			d.ID, d.Name, d.Description, d.AgeGridID, nullIfEmpty(d.DepthGridID), nullIfEmpty(d.SedimentGridID),
			nullIfEmpty(d.CrustGridID), nullIfEmpty(d.AgeUncertaintyGridID), d.CreatedAt, d.UpdatedAt, d.Version)
		return mapErr(err)
	})
	if err != nil {
		return store.Dataset{}, fmt.Errorf("creating dataset: %w", err)
	}
	return d, nil
}

// GetDataset implements store.Store.
func (s *Store) GetDataset(ctx context.Context, id string) (_ store.Dataset, err error) {
	defer unavailable(&err)
	if err := store.LookupID("dataset", id); err != nil {
		return store.Dataset{}, err
	}
	return getByID(ctx, s, scanDataset, "dataset", id, `SELECT `+datasetCols+` FROM datasets WHERE id = $1`)
}

// ListDatasets implements store.Store.
func (s *Store) ListDatasets(ctx context.Context, p store.Page) (_ []store.Dataset, err error) {
	defer unavailable(&err)
	return listPage(ctx, s, scanDataset, "datasets", `SELECT `+datasetCols+` FROM datasets ORDER BY created_at, id LIMIT $1 OFFSET $2`, p)
}

// UpdateDataset implements store.Store.
func (s *Store) UpdateDataset(ctx context.Context, d store.Dataset) (_ store.Dataset, err error) {
	defer unavailable(&err)
	if err := store.LookupID("dataset", d.ID); err != nil {
		return store.Dataset{}, err
	}
	if err := d.PrepareUpdate(); err != nil {
		return store.Dataset{}, err
	}
	expected := d.Version
	err = pgx.BeginFunc(ctx, s.pool, func(tx pgx.Tx) error {
		if err := checkDatasetGrids(ctx, tx, d); err != nil {
			return err
		}
		err := tx.QueryRow(ctx, `UPDATE datasets SET name = $2, description = $3, age_grid_id = $4, depth_grid_id = $5,
			sediment_grid_id = $6, crust_grid_id = $7, age_uncertainty_grid_id = $8, updated_at = $9, version = version + 1
			WHERE id = $1 AND version = $10 RETURNING created_at, version`,
			d.ID, d.Name, d.Description, d.AgeGridID, nullIfEmpty(d.DepthGridID), nullIfEmpty(d.SedimentGridID),
			nullIfEmpty(d.CrustGridID), nullIfEmpty(d.AgeUncertaintyGridID), d.UpdatedAt, expected).Scan(&d.CreatedAt, &d.Version)
		if errors.Is(err, pgx.ErrNoRows) {
			return versionCheck(ctx, tx, "datasets", "dataset", d.ID, expected)
		}
		return mapErr(err)
	})
	if err != nil {
		return store.Dataset{}, fmt.Errorf("updating dataset: %w", err)
	}
	d.CreatedAt = d.CreatedAt.UTC()
	return d, nil
}

// DeleteDataset implements store.Store.
func (s *Store) DeleteDataset(ctx context.Context, id string, expectedVersion int64) (err error) {
	defer unavailable(&err)
	if err := store.LookupID("dataset", id); err != nil {
		return err
	}
	return s.deleteVersioned(ctx, "datasets", "dataset", id, expectedVersion)
}
