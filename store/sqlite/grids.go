package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"fmt"

	"github.com/paulmach/orb/encoding/wkb"

	"ridgeflank/store"
	"ridgeflank/store/internal/gridimport"
)

const gridCols = `id, name, kind, units, vertical_sense, footprint, resolution_deg, registration, provenance, licence, content_hash, size_bytes, path, created_at`

func scanGrid(sc scanner) (store.Grid, error) {
	var g store.Grid
	var fp []byte
	var created int64
	err := sc.Scan(&g.ID, &g.Name, &g.Kind, &g.Units, &g.VerticalSense, &fp, &g.ResolutionDeg, &g.Registration,
		&g.Provenance, &g.Licence, &g.ContentHash, &g.SizeBytes, &g.Path, &created)
	if err != nil {
		return g, err
	}
	if g.Footprint, err = store.MultiPolygonFromWKB(fp); err != nil {
		return g, fmt.Errorf("grid %s: %w", g.ID, err)
	}
	g.CreatedAt = fromMicros(created)
	return g, nil
}

// ImportGrid implements store.Store.
func (s *Store) ImportGrid(ctx context.Context, g store.Grid, write func(tmpPath string) error) (store.Grid, bool, error) {
	return gridimport.Import(ctx, s.blobs, s.importCatalogue(), g, write)
}

func (s *Store) insertGrid(ctx context.Context, g store.Grid) (store.Grid, error) {
	fp, err := wkb.Marshal(g.Footprint)
	if err != nil {
		return store.Grid{}, fmt.Errorf("%w: grid footprint: %v", store.ErrInvalid, err)
	}
	b := g.Footprint.Bound()
	err = s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO grids (`+gridCols+`, min_lon, max_lon, min_lat, max_lat)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			g.ID, g.Name, g.Kind, g.Units, g.VerticalSense, fp, g.ResolutionDeg, g.Registration, g.Provenance, g.Licence,
			g.ContentHash, g.SizeBytes, g.Path, micros(g.CreatedAt), b.Min[0], b.Max[0], b.Min[1], b.Max[1])
		return mapErr(err)
	})
	if err != nil {
		return store.Grid{}, fmt.Errorf("cataloguing grid: %w", err)
	}
	return g, nil
}

// GetGrid implements store.Store.
func (s *Store) GetGrid(ctx context.Context, id string) (store.Grid, error) {
	return getByID(ctx, s, scanGrid, "grid", id, `SELECT `+gridCols+` FROM grids WHERE id = ?`)
}

// GetGridByHash implements store.Store.
func (s *Store) GetGridByHash(ctx context.Context, sha256Hex string) (store.Grid, error) {
	g, err := scanGrid(s.db.QueryRowContext(ctx, `SELECT `+gridCols+` FROM grids WHERE content_hash = ?`, sha256Hex))
	if errors.Is(err, sql.ErrNoRows) {
		return store.Grid{}, fmt.Errorf("grid with content %s: %w", sha256Hex, store.ErrNotFound)
	}
	return g, err
}

// ListGrids implements store.Store. The catalogue is small: boxes prefilter in SQL, the exact
// footprint test runs in Go.
func (s *Store) ListGrids(ctx context.Context, f store.GridFilter) ([]store.Grid, error) {
	pieces, err := f.Prepare()
	if err != nil {
		return nil, err
	}
	q := `SELECT ` + gridCols + ` FROM grids WHERE (? = '' OR kind = ?) ORDER BY created_at, id`
	args := []any{f.Kind, f.Kind}
	if len(pieces) == 0 {
		q += ` LIMIT ? OFFSET ?`
		args = append(args, f.EffectiveLimit(), f.Offset)
	}
	rows, err := s.db.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("listing grids: %w", err)
	}
	if len(pieces) == 0 {
		return collect(rows, scanGrid)
	}
	return collectPage(rows, scanGrid, func(g store.Grid) bool { return anyIntersects(g.Footprint, pieces) }, f.Page)
}

// DeleteGrid implements store.Store.
func (s *Store) DeleteGrid(ctx context.Context, id string) error {
	var path string
	err := s.write(ctx, func(tx *sql.Tx) error {
		err := tx.QueryRowContext(ctx, `DELETE FROM grids WHERE id = ? RETURNING path`, id).Scan(&path)
		if errors.Is(err, sql.ErrNoRows) {
			return notFound("grid", id)
		}
		if err != nil {
			if e := mapErr(err); errors.Is(e, store.ErrConflict) {
				return fmt.Errorf("grid %q is used by a dataset: %w", id, store.ErrConflict)
			}
			return err
		}
		return nil
	})
	if err != nil {
		return err
	}
	// The row is gone; remove the file unless an import holds a lease (then the next sweep does).
	if _, err := s.Sweep(ctx); err != nil {
		s.log.Warn("sqlite store: grid file left for the next sweep", "path", path, "err", err)
	}
	return nil
}
