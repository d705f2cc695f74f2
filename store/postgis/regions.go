package postgis

import (
	"context"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"ridgeflank/store"
)

// Geometry is read back with ST_AsBinary (WKB holds the float64 values exactly), whereas
// ST_AsGeoJSON would round to 9 decimal places by default.
const regionCols = `id, name, description, tags, ST_AsBinary(geom), owner, created_at, updated_at, version`

func scanRegion(row pgx.Row) (store.Region, error) {
	var r store.Region
	var geom []byte
	if err := row.Scan(&r.ID, &r.Name, &r.Description, &r.Tags, &geom, &r.Owner, &r.CreatedAt, &r.UpdatedAt, &r.Version); err != nil {
		return r, err
	}
	r.Tags = store.NormaliseTags(r.Tags)
	mp, err := store.MultiPolygonFromWKB(geom)
	if err != nil {
		return r, fmt.Errorf("region %s: %w", r.ID, err)
	}
	r.Geometry = mp
	r.CreatedAt, r.UpdatedAt = r.CreatedAt.UTC(), r.UpdatedAt.UTC()
	return r, nil
}

// CreateRegion implements store.Store.
func (s *Store) CreateRegion(ctx context.Context, r store.Region) (_ store.Region, err error) {
	defer unavailable(&err)
	if err := r.PrepareCreate(); err != nil {
		return store.Region{}, err
	}
	gj, err := geoJSON(r.Geometry)
	if err != nil {
		return store.Region{}, err
	}
	_, err = s.pool.Exec(ctx, `INSERT INTO regions (id, name, description, tags, geom, owner, created_at, updated_at, version)
		VALUES ($1, $2, $3, $4, ST_Multi(ST_SetSRID(ST_GeomFromGeoJSON($5::text), 4326)), $6, $7, $8, $9)`,
		r.ID, r.Name, r.Description, r.Tags, gj, r.Owner, r.CreatedAt, r.UpdatedAt, r.Version)
	if err != nil {
		return store.Region{}, fmt.Errorf("creating region: %w", mapErr(err))
	}
	return r, nil
}

// GetRegion implements store.Store.
func (s *Store) GetRegion(ctx context.Context, id string) (_ store.Region, err error) {
	defer unavailable(&err)
	if err := store.LookupID("region", id); err != nil {
		return store.Region{}, err
	}
	return getByID(ctx, s, scanRegion, "region", id, `SELECT `+regionCols+` FROM regions WHERE id = $1`)
}

// UpdateRegion implements store.Store. The conditional UPDATE is atomic: of several writers
// holding the same version, the first to commit wins and the others match no row.
func (s *Store) UpdateRegion(ctx context.Context, r store.Region) (_ store.Region, err error) {
	defer unavailable(&err)
	if err := store.LookupID("region", r.ID); err != nil {
		return store.Region{}, err
	}
	if err := r.PrepareUpdate(); err != nil {
		return store.Region{}, err
	}
	gj, err := geoJSON(r.Geometry)
	if err != nil {
		return store.Region{}, err
	}
	expected := r.Version
	err = s.pool.QueryRow(ctx, `UPDATE regions SET name = $2, description = $3, tags = $4,
		geom = ST_Multi(ST_SetSRID(ST_GeomFromGeoJSON($5::text), 4326)), owner = $6, updated_at = $7, version = version + 1
		WHERE id = $1 AND version = $8 RETURNING created_at, version`,
		r.ID, r.Name, r.Description, r.Tags, gj, r.Owner, r.UpdatedAt, expected).Scan(&r.CreatedAt, &r.Version)
	if errors.Is(err, pgx.ErrNoRows) {
		return store.Region{}, fmt.Errorf("updating region: %w", versionCheck(ctx, s.pool, "regions", "region", r.ID, expected))
	}
	if err != nil {
		return store.Region{}, fmt.Errorf("updating region: %w", mapErr(err))
	}
	r.CreatedAt = r.CreatedAt.UTC()
	return r, nil
}

// DeleteRegion implements store.Store.
func (s *Store) DeleteRegion(ctx context.Context, id string, expectedVersion int64) (err error) {
	defer unavailable(&err)
	if err := store.LookupID("region", id); err != nil {
		return err
	}
	return s.deleteVersioned(ctx, "regions", "region", id, expectedVersion)
}

func (s *Store) deleteVersioned(ctx context.Context, table, what, id string, expectedVersion int64) error {
	tag, err := s.pool.Exec(ctx, `DELETE FROM `+table+` WHERE id = $1 AND ($2::bigint = 0 OR version = $2)`, id, expectedVersion)
	if err != nil {
		return fmt.Errorf("deleting %s: %w", what, mapErr(err))
	}
	if tag.RowsAffected() == 0 {
		return versionCheck(ctx, s.pool, table, what, id, expectedVersion)
	}
	return nil
}

// ListRegions implements store.Store; all filtering runs in the database.
func (s *Store) ListRegions(ctx context.Context, f store.RegionFilter) (_ []store.Region, err error) {
	defer unavailable(&err)
	boxes, err := f.Prepare()
	if err != nil {
		return nil, err
	}
	var args sqlArgs
	where, err := spatialPredicate("geom", &args, boxes, f.Intersects)
	if err != nil {
		return nil, err
	}
	if f.Tag != "" {
		where += " AND tags @> ARRAY[" + args.add(f.Tag) + "::text]"
	}
	if f.Owner != "" {
		where += " AND owner = " + args.add(f.Owner)
	}
	q := `SELECT ` + regionCols + ` FROM regions WHERE ` + where +
		` ORDER BY created_at, id LIMIT ` + args.add(f.EffectiveLimit()) + ` OFFSET ` + args.add(f.Offset)
	rows, err := s.pool.Query(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("listing regions: %w", err)
	}
	return collect(rows, scanRegion)
}
