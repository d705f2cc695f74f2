package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"

	"github.com/paulmach/orb/encoding/wkb"

	"ridgeflank/store"
)

const trackCols = `id, name, description, waypoints, params, created_at, updated_at, version`

func scanTrack(sc scanner) (store.Track, error) {
	var t store.Track
	var wp []byte
	var params string
	var created, updated int64
	if err := sc.Scan(&t.ID, &t.Name, &t.Description, &wp, &params, &created, &updated, &t.Version); err != nil {
		return t, err
	}
	ls, err := store.LineStringFromWKB(wp)
	if err != nil {
		return t, fmt.Errorf("track %s: waypoints: %w", t.ID, err)
	}
	t.Waypoints = ls
	t.Params = json.RawMessage(params)
	t.CreatedAt, t.UpdatedAt = fromMicros(created), fromMicros(updated)
	return t, nil
}

// CreateTrack implements store.Store.
func (s *Store) CreateTrack(ctx context.Context, t store.Track) (store.Track, error) {
	if err := t.PrepareCreate(); err != nil {
		return store.Track{}, err
	}
	wp, err := wkb.Marshal(t.Waypoints)
	if err != nil {
		return store.Track{}, fmt.Errorf("%w: track waypoints: %v", store.ErrInvalid, err)
	}
	err = s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO tracks (`+trackCols+`) VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
			t.ID, t.Name, t.Description, wp, string(t.Params), micros(t.CreatedAt), micros(t.UpdatedAt), t.Version)
		return mapErr(err)
	})
	if err != nil {
		return store.Track{}, fmt.Errorf("creating track: %w", err)
	}
	return t, nil
}

// GetTrack implements store.Store.
func (s *Store) GetTrack(ctx context.Context, id string) (store.Track, error) {
	return getByID(ctx, s, scanTrack, "track", id, `SELECT `+trackCols+` FROM tracks WHERE id = ?`)
}

// ListTracks implements store.Store.
func (s *Store) ListTracks(ctx context.Context, p store.Page) ([]store.Track, error) {
	return listPage(ctx, s, scanTrack, "tracks", `SELECT `+trackCols+` FROM tracks ORDER BY created_at, id LIMIT ? OFFSET ?`, p)
}

// UpdateTrack implements store.Store.
func (s *Store) UpdateTrack(ctx context.Context, t store.Track) (store.Track, error) {
	if err := t.PrepareUpdate(); err != nil {
		return store.Track{}, err
	}
	wp, err := wkb.Marshal(t.Waypoints)
	if err != nil {
		return store.Track{}, fmt.Errorf("%w: track waypoints: %v", store.ErrInvalid, err)
	}
	expected := t.Version
	err = s.write(ctx, func(tx *sql.Tx) error {
		var created int64
		err := tx.QueryRowContext(ctx, `UPDATE tracks SET name = ?, description = ?, waypoints = ?, params = ?, updated_at = ?, version = version + 1
			WHERE id = ? AND version = ? RETURNING created_at, version`,
			t.Name, t.Description, wp, string(t.Params), micros(t.UpdatedAt), t.ID, expected).Scan(&created, &t.Version)
		if errors.Is(err, sql.ErrNoRows) {
			return versionCheck(ctx, tx, "tracks", "track", t.ID, expected)
		}
		if err != nil {
			return mapErr(err)
		}
		t.CreatedAt = fromMicros(created)
		return nil
	})
	if err != nil {
		return store.Track{}, fmt.Errorf("updating track: %w", err)
	}
	return t, nil
}

// DeleteTrack implements store.Store.
func (s *Store) DeleteTrack(ctx context.Context, id string, expectedVersion int64) error {
	return s.deleteVersioned(ctx, "tracks", "track", id, expectedVersion)
}
