package store

import (
	"context"
	"fmt"
	"log/slog"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkb"
)

// Helpers every backend uses the same way.

// StartUp runs the checks a backend makes when it opens: ping, apply pending migrations
// (unless noAutoMigrate), then sweep the grid directory if the schema is up to date (a
// warning on log otherwise). It fails only when the ping or a migration fails; the caller
// then closes its connections.
func StartUp(ctx context.Context, s Store, log *slog.Logger, noAutoMigrate bool) error {
	name := s.Backend() + " store"
	if err := s.Ping(ctx); err != nil {
		return err
	}
	if !noAutoMigrate {
		if applied, err := s.Migrate(ctx); err != nil {
			return err
		} else if len(applied) > 0 {
			log.Info(name+": migrations applied", "files", applied)
		}
	}
	if ok, err := s.MigrationsApplied(ctx); err != nil || !ok {
		log.Warn(name+": schema is not up to date; run `ridgeflank migrate`", "err", err)
	} else if removed, err := s.Sweep(ctx); err != nil {
		log.Warn(name+": grid directory not swept", "err", err)
	} else if len(removed) > 0 {
		log.Info(name+": removed unreferenced grid files", "files", removed)
	}
	return nil
}

// MultiPolygonFromWKB decodes a stored geometry (WKB keeps the float64 values exactly) that
// must be a MultiPolygon.
func MultiPolygonFromWKB(b []byte) (orb.MultiPolygon, error) {
	return fromWKB[orb.MultiPolygon](b)
}

// LineStringFromWKB decodes stored waypoints (WKB) that must be a LineString.
func LineStringFromWKB(b []byte) (orb.LineString, error) {
	return fromWKB[orb.LineString](b)
}

func fromWKB[T orb.Geometry](b []byte) (T, error) {
	var zero T
	g, err := wkb.Unmarshal(b)
	if err != nil {
		return zero, fmt.Errorf("geometry: %w", err)
	}
	v, ok := g.(T)
	if !ok {
		return zero, fmt.Errorf("geometry: stored %s, want %s", g.GeoJSONType(), zero.GeoJSONType())
	}
	return v, nil
}
