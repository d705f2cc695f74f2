package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkb"

	"ridgeflank/store"
)

const regionCols = `id, name, description, tags, geom, owner, created_at, updated_at, version`

type scanner interface{ Scan(dest ...any) error }

func scanRegion(sc scanner) (store.Region, error) {
	var r store.Region
	var tags string
	var geom []byte
	var created, updated int64
	if err := sc.Scan(&r.ID, &r.Name, &r.Description, &tags, &geom, &r.Owner, &created, &updated, &r.Version); err != nil {
		return r, err
	}
	if err := json.Unmarshal([]byte(tags), &r.Tags); err != nil {
		return r, fmt.Errorf("region %s: tags: %w", r.ID, err)
	}
	r.Tags = store.NormaliseTags(r.Tags)
	mp, err := store.MultiPolygonFromWKB(geom)
	if err != nil {
		return r, fmt.Errorf("region %s: %w", r.ID, err)
	}
	r.Geometry = mp
	r.CreatedAt, r.UpdatedAt = fromMicros(created), fromMicros(updated)
	return r, nil
}

func tagsJSON(tags []string) string {
	b, _ := json.Marshal(store.NormaliseTags(tags))
	return string(b)
}

// CreateRegion implements store.Store.
func (s *Store) CreateRegion(ctx context.Context, r store.Region) (store.Region, error) {
	if err := r.PrepareCreate(); err != nil {
		return store.Region{}, err
	}
	geom, err := wkb.Marshal(r.Geometry)
	if err != nil {
		return store.Region{}, fmt.Errorf("%w: region geometry: %v", store.ErrInvalid, err)
	}
	b := r.Geometry.Bound()
	err = s.write(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `INSERT INTO regions (`+regionCols+`) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)`,
			r.ID, r.Name, r.Description, tagsJSON(r.Tags), geom, r.Owner, micros(r.CreatedAt), micros(r.UpdatedAt), r.Version)
		if err != nil {
			return mapErr(err)
		}
		rid, err := res.LastInsertId()
		if err != nil {
			return err
		}
		_, err = tx.ExecContext(ctx, `INSERT INTO regions_rtree (rid, min_lon, max_lon, min_lat, max_lat) VALUES (?, ?, ?, ?, ?)`,
			rid, b.Min[0], b.Max[0], b.Min[1], b.Max[1])
		return err
	})
	if err != nil {
		return store.Region{}, fmt.Errorf("creating region: %w", err)
	}
	return r, nil
}

// GetRegion implements store.Store.
func (s *Store) GetRegion(ctx context.Context, id string) (store.Region, error) {
	return getByID(ctx, s, scanRegion, "region", id, `SELECT `+regionCols+` FROM regions WHERE id = ?`)
}

// UpdateRegion implements store.Store.
func (s *Store) UpdateRegion(ctx context.Context, r store.Region) (store.Region, error) {
	if err := r.PrepareUpdate(); err != nil {
		return store.Region{}, err
	}
	geom, err := wkb.Marshal(r.Geometry)
	if err != nil {
		return store.Region{}, fmt.Errorf("%w: region geometry: %v", store.ErrInvalid, err)
	}
	b := r.Geometry.Bound()
	expected := r.Version
	err = s.write(ctx, func(tx *sql.Tx) error {
		var rid, created int64
		err := tx.QueryRowContext(ctx, `UPDATE regions SET name = ?, description = ?, tags = ?, geom = ?, owner = ?, updated_at = ?, version = version + 1
			WHERE id = ? AND version = ? RETURNING rid, created_at, version`,
			r.Name, r.Description, tagsJSON(r.Tags), geom, r.Owner, micros(r.UpdatedAt), r.ID, expected).Scan(&rid, &created, &r.Version)
		if errors.Is(err, sql.ErrNoRows) {
			return versionCheck(ctx, tx, "regions", "region", r.ID, expected)
		}
		if err != nil {
			return mapErr(err)
		}
		r.CreatedAt = fromMicros(created)
		_, err = tx.ExecContext(ctx, `UPDATE regions_rtree SET min_lon = ?, max_lon = ?, min_lat = ?, max_lat = ? WHERE rid = ?`,
			b.Min[0], b.Max[0], b.Min[1], b.Max[1], rid)
		return err
	})
	if err != nil {
		return store.Region{}, fmt.Errorf("updating region: %w", err)
	}
	return r, nil
}

// DeleteRegion implements store.Store.
func (s *Store) DeleteRegion(ctx context.Context, id string, expectedVersion int64) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		var rid int64
		err := tx.QueryRowContext(ctx, `DELETE FROM regions WHERE id = ? AND (? = 0 OR version = ?) RETURNING rid`,
			id, expectedVersion, expectedVersion).Scan(&rid)
		if errors.Is(err, sql.ErrNoRows) {
			return versionCheck(ctx, tx, "regions", "region", id, expectedVersion)
		}
		if err != nil {
			return err
		}
		_, err = tx.ExecContext(ctx, `DELETE FROM regions_rtree WHERE rid = ?`, rid)
		return err
	})
}

// rtreeQuery returns SQL selecting region row ids whose boxes overlap any of the query boxes,
// each tested at every store.QueryShifts offset.
func rtreeQuery(boxes []orb.Bound) (string, []any) {
	var parts []string
	var args []any
	for _, b := range boxes {
		for _, d := range store.QueryShifts {
			parts = append(parts, `SELECT rid FROM regions_rtree WHERE max_lon >= ? AND min_lon <= ? AND max_lat >= ? AND min_lat <= ?`)
			args = append(args, b.Min[0]+d, b.Max[0]+d, b.Min[1], b.Max[1])
		}
	}
	return strings.Join(parts, " UNION "), args
}

// ListRegions implements store.Store. The R*Tree selects candidates by box; the exact
// intersection test then runs in Go (intersectsShifted), before offset and limit apply.
func (s *Store) ListRegions(ctx context.Context, f store.RegionFilter) ([]store.Region, error) {
	bboxPieces, err := f.Prepare()
	if err != nil {
		return nil, err
	}
	boxes := append([]orb.Bound(nil), bboxPieces...) // query boxes, for the R*Tree
	var tests []orb.Geometry
	if f.Intersects != nil {
		tests = append(tests, f.Intersects)
		if len(boxes) == 0 {
			boxes = append(boxes, f.Intersects.Bound())
		}
	}
	spatial := f.BBox != nil || f.Intersects != nil

	q := `SELECT ` + regionCols + ` FROM regions r WHERE 1 = 1`
	var args []any
	if spatial {
		sub, a := rtreeQuery(boxes)
		q += ` AND r.rid IN (` + sub + `)`
		args = append(args, a...)
	}
	if f.Tag != "" {
		q += ` AND EXISTS (SELECT 1 FROM json_each(r.tags) WHERE value = ?)`
		args = append(args, f.Tag)
	}
	if f.Owner != "" {
		q += ` AND r.owner = ?`
		args = append(args, f.Owner)
	}
	q += ` ORDER BY r.created_at, r.id`
	if !spatial {
		q += ` LIMIT ? OFFSET ?`
		args = append(args, f.EffectiveLimit(), f.Offset)
	}
	rows, err := s.db.QueryContext(ctx, q, args...)
	if err != nil {
		return nil, fmt.Errorf("listing regions: %w", err)
	}
	if !spatial {
		return collect(rows, scanRegion)
	}
	return collectPage(rows, scanRegion, func(r store.Region) bool {
		return (len(bboxPieces) == 0 || anyIntersects(r.Geometry, bboxPieces)) &&
			(len(tests) == 0 || intersectsShifted(r.Geometry, tests[0]))
	}, f.Page)
}

func anyIntersects(mp orb.MultiPolygon, pieces []orb.Bound) bool {
	for _, b := range pieces {
		if intersectsShifted(mp, b) {
			return true
		}
	}
	return false
}
