package postgis

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"

	"github.com/jackc/pgx/v5"

	"ridgeflank/store"
)

const trackCols = `id, name, description, ST_AsBinary(waypoints), params::text, created_at, updated_at, version`

func scanTrack(row pgx.Row) (store.Track, error) {
	var t store.Track
	var wp []byte
	var params string
	if err := row.Scan(&t.ID, &t.Name, &t.Description, &wp, &params, &t.CreatedAt, &t.UpdatedAt, &t.Version); err != nil {
		return t, err
	}
	ls, err := store.LineStringFromWKB(wp)
	if err != nil {
		return t, fmt.Errorf("track %s: waypoints: %w", t.ID, err)
	}
	t.Waypoints = ls
	t.Params = json.RawMessage(params)
	t.CreatedAt, t.UpdatedAt = t.CreatedAt.UTC(), t.UpdatedAt.UTC()
	return t, nil
}

// CreateTrack implements store.Store.
func (s *Store) CreateTrack(ctx context.Context, t store.Track) (_ store.Track, err error) {
	defer unavailable(&err)
	if err := t.PrepareCreate(); err != nil {
		return store.Track{}, err
	}
	gj, err := geoJSON(t.Waypoints)
	if err != nil {
		return store.Track{}, err
	}
	_, err = s.pool.Exec(ctx, `INSERT INTO tracks (id, name, description, waypoints, params, created_at, updated_at, version)
		VALUES ($1, $2, $3, ST_SetSRID(ST_GeomFromGeoJSON($4::text), 4326), $5::text::json, $6, $7, $8)`,
		t.ID, t.Name, t.Description, gj, string(t.Params), t.CreatedAt, t.UpdatedAt, t.Version)
	if err != nil {
		return store.Track{}, fmt.Errorf("creating track: %w", mapErr(err))
	}
	return t, nil
}

// GetTrack implements store.Store.
func (s *Store) GetTrack(ctx context.Context, id string) (_ store.Track, err error) {
	defer unavailable(&err)
	if err := store.LookupID("track", id); err != nil {
		return store.Track{}, err
	}
	return getByID(ctx, s, scanTrack, "track", id, `SELECT `+trackCols+` FROM tracks WHERE id = $1`)
}

// ListTracks implements store.Store.
func (s *Store) ListTracks(ctx context.Context, p store.Page) (_ []store.Track, err error) {
	defer unavailable(&err)
	return listPage(ctx, s, scanTrack, "tracks", `SELECT `+trackCols+` FROM tracks ORDER BY created_at, id LIMIT $1 OFFSET $2`, p)
}

// UpdateTrack implements store.Store.
func (s *Store) UpdateTrack(ctx context.Context, t store.Track) (_ store.Track, err error) {
	defer unavailable(&err)
	if err := store.LookupID("track", t.ID); err != nil {
		return store.Track{}, err
	}
	if err := t.PrepareUpdate(); err != nil {
		return store.Track{}, err
	}
	gj, err := geoJSON(t.Waypoints)
	if err != nil {
		return store.Track{}, err
	}
	expected := t.Version
	err = s.pool.QueryRow(ctx, `UPDATE tracks SET name = $2, description = $3, waypoints = ST_SetSRID(ST_GeomFromGeoJSON($4::text), 4326),
		params = $5::text::json, updated_at = $6, version = version + 1
		WHERE id = $1 AND version = $7 RETURNING created_at, version`,
		t.ID, t.Name, t.Description, gj, string(t.Params), t.UpdatedAt, expected).Scan(&t.CreatedAt, &t.Version)
	if errors.Is(err, pgx.ErrNoRows) {
		return store.Track{}, fmt.Errorf("updating track: %w", versionCheck(ctx, s.pool, "tracks", "track", t.ID, expected))
	}
	if err != nil {
		return store.Track{}, fmt.Errorf("updating track: %w", mapErr(err))
	}
	t.CreatedAt = t.CreatedAt.UTC()
	return t, nil
}

// DeleteTrack implements store.Store.
func (s *Store) DeleteTrack(ctx context.Context, id string, expectedVersion int64) (err error) {
	defer unavailable(&err)
	if err := store.LookupID("track", id); err != nil {
		return err
	}
	return s.deleteVersioned(ctx, "tracks", "track", id, expectedVersion)
}
