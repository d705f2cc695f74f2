package postgis

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"ridgeflank/store"
	"ridgeflank/store/internal/gridimport"
)

const gridCols = `id, name, kind, units, vertical_sense, ST_AsBinary(footprint), resolution_deg, registration, provenance, licence, content_hash, size_bytes, path, created_at`

func scanGrid(row pgx.Row) (store.Grid, error) {
	var g store.Grid
	var fp []byte
	err := row.Scan(&g.ID, &g.Name, &g.Kind, &g.Units, &g.VerticalSense, &fp, &g.ResolutionDeg, &g.Registration,
		&g.Provenance, &g.Licence, &g.ContentHash, &g.SizeBytes, &g.Path, &g.CreatedAt)
	if err != nil {
		return g, err
	}
	if g.Footprint, err = store.MultiPolygonFromWKB(fp); err != nil {
		return g, fmt.Errorf("grid %s: %w", g.ID, err)
	}
	g.CreatedAt = g.CreatedAt.UTC()
	return g, nil
}

// ImportGrid implements store.Store.
func (s *Store) ImportGrid(ctx context.Context, g store.Grid, write func(tmpPath string) error) (_ store.Grid, _ bool, err error) {
	defer unavailable(&err)
	return gridimport.Import(ctx, s.blobs, s.importCatalogue(), g, write)
}

func (s *Store) insertGrid(ctx context.Context, g store.Grid) (store.Grid, error) {
	gj, err := geoJSON(g.Footprint)
	if err != nil {
		return store.Grid{}, err
	}
	_, err = s.pool.Exec(ctx, `INSERT INTO grids (id, name, kind, units, vertical_sense, footprint, resolution_deg, registration,
			provenance, licence, content_hash, size_bytes, path, created_at)
		VALUES ($1, $2, $3, $4, $5, ST_Multi(ST_SetSRID(ST_GeomFromGeoJSON($6::text), 4326)), $7, $8, $9, $10, $11, $12, $13, $14)`,
		g.ID, g.Name, string(g.Kind), g.Units, string(g.VerticalSense), gj, g.ResolutionDeg, string(g.Registration),
		g.Provenance, g.Licence, g.ContentHash, g.SizeBytes, g.Path, g.CreatedAt)
	if err != nil {
		return store.Grid{}, fmt.Errorf("cataloguing grid: %w", mapErr(err))
	}
	return g, nil
}

// GetGrid implements store.Store.
func (s *Store) GetGrid(ctx context.Context, id string) (_ store.Grid, err error) {
	defer unavailable(&err)
	if err := store.LookupID("grid", id); err != nil {
		return store.Grid{}, err
	}
	return getByID(ctx, s, scanGrid, "grid", id, `SELECT `+gridCols+` FROM grids WHERE id = $1`)
}

// GetGridByHash implements store.Store.
func (s *Store) GetGridByHash(ctx context.Context, sha256Hex string) (_ store.Grid, err error) {
	defer unavailable(&err)
	g, err := scanGrid(s.pool.QueryRow(ctx, `SELECT `+gridCols+` FROM grids WHERE content_hash = $1`, sha256Hex))
	if errors.Is(err, pgx.ErrNoRows) {
		return store.Grid{}, fmt.Errorf("grid with content %s: %w", sha256Hex, store.ErrNotFound)
	}
	return g, err
}

// ListGrids implements store.Store.
func (s *Store) ListGrids(ctx context.Context, f store.GridFilter) (_ []store.Grid, err error) {
	defer unavailable(&err)
	boxes, err := f.Prepare()
	if err != nil {
		return nil, err
	}
	var args sqlArgs
	where, err := spatialPredicate("footprint", &args, boxes, nil)
	if err != nil {
		return nil, err
	}
	if f.Kind != "" {
		where += " AND kind = " + args.add(string(f.Kind))
	}
	q := `SELECT ` + gridCols + ` FROM grids WHERE ` + where +
		` ORDER BY created_at, id LIMIT ` + args.add(f.EffectiveLimit()) + ` OFFSET ` + args.add(f.Offset)
	rows, err := s.pool.Query(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("listing grids: %w", err)
	}
	return collect(rows, scanGrid)
}

// DeleteGrid implements store.Store.
func (s *Store) DeleteGrid(ctx context.Context, id string) (err error) {
	defer unavailable(&err)
	if err := store.LookupID("grid", id); err != nil {
		return err
	}
	var path string
	err = s.pool.QueryRow(ctx, `DELETE FROM grids WHERE id = $1 RETURNING path`, id).Scan(&path)
	if errors.Is(err, pgx.ErrNoRows) {
		return notFound("grid", id)
	}
	if err != nil {
		if e := mapErr(err); errors.Is(e, store.ErrConflict) {
			return fmt.Errorf("grid %q is used by a dataset: %w", id, store.ErrConflict)
		}
		return fmt.Errorf("deleting grid: %w", err)
	}
	// The row is gone; remove the file unless an import holds a lease (then the next sweep does).
	if _, err := s.Sweep(ctx); err != nil {
		s.log.Warn("postgis store: grid file left for the next sweep", "path", path, "err", err)
	}
	return nil
}
