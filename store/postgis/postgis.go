package postgis

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"path/filepath"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgxpool"
	"github.com/jackc/pgx/v5/stdlib"
	"github.com/paulmach/orb"
	"github.com/pressly/goose/v3"

	"ridgeflank/migrations"
	"ridgeflank/store"
	"ridgeflank/store/internal/gridimport"
)

func init() {
	store.Register(store.BackendPostGIS, func(ctx context.Context, cfg store.Config) (store.Store, error) {
		return Open(ctx, cfg)
	})
}

// DefaultConnectTimeout bounds the making of one connection when the database URL has no
// connect_timeout: long enough for a server across a data centre, short enough that requests
// fail fast while the database is down (common practice, no source).
const DefaultConnectTimeout = 5 * time.Second

// Store is the PostgreSQL/PostGIS store. It is safe for concurrent use.
type Store struct {
	pool  *pgxpool.Pool
	blobs store.Blobs
	log   *slog.Logger
}

var _ store.Store = (*Store)(nil)

// Open connects to cfg.DatabaseURL, applies pending migrations unless cfg.NoAutoMigrate
// (holding an advisory lock, so concurrent start-ups are safe), and sweeps the grid directory
// cfg.GridDir (default DataDir/grids).
//
// A connection that cannot be made within the URL's connect_timeout (DefaultConnectTimeout when
// the URL sets none) fails with store.ErrUnavailable, and so does every method while the
// database cannot be reached; a request's context bounds the wait for a pooled connection.
func Open(ctx context.Context, cfg store.Config) (_ *Store, err error) {
	defer unavailable(&err)
	cfg = cfg.WithDefaults()
	if cfg.DatabaseURL == "" {
		return nil, fmt.Errorf("%w: postgis store needs a database URL", store.ErrInvalid)
	}
	pcfg, err := pgxpool.ParseConfig(cfg.DatabaseURL)
	if err != nil {
		return nil, fmt.Errorf("%w: database URL: %v", store.ErrInvalid, err)
	}
	if pcfg.ConnConfig.ConnectTimeout <= 0 {
		pcfg.ConnConfig.ConnectTimeout = DefaultConnectTimeout
	}
	blobs, err := store.OpenBlobs(ctx, cfg)
	if err != nil {
		return nil, err
	}
	pool, err := pgxpool.NewWithConfig(ctx, pcfg)
	if err != nil {
		return nil, fmt.Errorf("postgis store: %w", err)
	}
	s := &Store{pool: pool, blobs: blobs, log: cfg.Logger}
	if err := store.StartUp(ctx, s, s.log, cfg.NoAutoMigrate); err != nil {
		pool.Close()
		return nil, err
	}
	return s, nil
}

// Pool returns the connection pool (for River).
func (s *Store) Pool() *pgxpool.Pool { return s.pool }

// Backend implements store.Store.
func (s *Store) Backend() string { return store.BackendPostGIS }

// Blobs implements store.Store.
func (s *Store) Blobs() store.Blobs { return s.blobs }

// Close implements store.Store.
func (s *Store) Close() error {
	s.pool.Close()
	return nil
}

// Ping implements store.Store.
func (s *Store) Ping(ctx context.Context) (err error) {
	defer unavailable(&err)
	if err := s.pool.Ping(ctx); err != nil {
		return fmt.Errorf("postgis store: %w", err)
	}
	return nil
}

// withProvider runs fn with a goose provider on a database/sql view of the pool.
func (s *Store) withProvider(fn func(p *goose.Provider) error) error {
	db := stdlib.OpenDBFromPool(s.pool)
	defer db.Close()
	p, err := migrations.NewProvider(migrations.Postgres, db)
	if err != nil {
		return err
	}
	return fn(p)
}

// Migrate implements store.Store.
func (s *Store) Migrate(ctx context.Context) (_ []string, err error) {
	defer unavailable(&err)
	var names []string
	err = s.withProvider(func(p *goose.Provider) error {
		res, err := p.Up(ctx)
		for _, r := range res {
			if r.Error == nil {
				names = append(names, filepath.Base(r.Source.Path))
			}
		}
		return err
	})
	if err != nil {
		return names, fmt.Errorf("postgis store: migrating: %w", err)
	}
	return names, nil
}

// MigrationsApplied implements store.Store.
func (s *Store) MigrationsApplied(ctx context.Context) (_ bool, err error) {
	defer unavailable(&err)
	var pending bool
	err = s.withProvider(func(p *goose.Provider) error {
		var err error
		pending, err = p.HasPending(ctx)
		return err
	})
	if err != nil {
		return false, fmt.Errorf("postgis store: %w", err)
	}
	return !pending, nil
}

// MigrationStatus implements store.Store.
func (s *Store) MigrationStatus(ctx context.Context) (_ []store.MigrationStatus, err error) {
	defer unavailable(&err)
	var out []store.MigrationStatus
	err = s.withProvider(func(p *goose.Provider) error {
		st, err := p.Status(ctx)
		if err != nil {
			return err
		}
		for _, m := range st {
			out = append(out, store.MigrationStatus{
				Version:   m.Source.Version,
				Source:    filepath.Base(m.Source.Path),
				Applied:   m.State == goose.StateApplied,
				AppliedAt: m.AppliedAt.UTC(),
			})
		}
		return nil
	})
	if err != nil {
		return nil, fmt.Errorf("postgis store: %w", err)
	}
	return out, nil
}

// Sweep implements store.Store.
func (s *Store) Sweep(ctx context.Context) (_ []string, err error) {
	defer unavailable(&err)
	var id string
	if err := s.pool.QueryRow(ctx, `SELECT value FROM store_meta WHERE key = 'catalogue_id'`).Scan(&id); err != nil {
		return nil, fmt.Errorf("postgis store: catalogue id: %w", err)
	}
	return s.blobs.Sweep(ctx, id, func(ctx context.Context) (map[string]bool, error) {
		rows, err := s.pool.Query(ctx, `SELECT path FROM grids`)
		if err != nil {
			return nil, err
		}
		paths, err := pgx.CollectRows(rows, pgx.RowTo[string])
		if err != nil {
			return nil, err
		}
		ref := make(map[string]bool, len(paths))
		for _, p := range paths {
			ref[p] = true
		}
		return ref, nil
	})
}

// mapErr turns constraint violations into store errors.
func mapErr(err error) error {
	if err == nil {
		return nil
	}
	var pe *pgconn.PgError
	if errors.As(err, &pe) {
		switch pe.Code {
		case "23505": // unique_violation
			return store.WithDetail(store.ErrConflict, "already exists", err)
		case "23503": // foreign_key_violation
			return store.WithDetail(store.ErrConflict, "still referenced or refers to a missing row", err)
		case "23514", "23502", "22P02": // check, not null, invalid text representation
			return store.WithDetail(store.ErrInvalid, "a value breaks a rule of the store", err)
		}
	}
	return err
}

func notFound(what, id string) error { return fmt.Errorf("%s %q: %w", what, id, store.ErrNotFound) }

type querier interface {
	QueryRow(ctx context.Context, sql string, args ...any) pgx.Row
}

// versionCheck explains why an update or delete matched no row.
func versionCheck(ctx context.Context, q querier, table, what, id string, expected int64) error {
	var v int64
	err := q.QueryRow(ctx, `SELECT version FROM `+table+` WHERE id = $1`, id).Scan(&v)
	if errors.Is(err, pgx.ErrNoRows) {
		return notFound(what, id)
	}
	if err != nil {
		return err
	}
	return fmt.Errorf("%s %q: %w: expected version %d, stored version %d", what, id, store.ErrVersionMismatch, expected, v)
}

// geoJSON encodes a geometry for ST_GeomFromGeoJSON. encoding/json writes the shortest
// decimal that reads back as the same float64, so no precision is lost on the way in.
func geoJSON(g orb.Geometry) (string, error) {
	if b, ok := g.(orb.Bound); ok {
		g = b.ToPolygon()
	}
	raw, err := json.Marshal(struct {
		Type        string       `json:"type"`
		Coordinates orb.Geometry `json:"coordinates"`
	}{g.GeoJSONType(), g})
	if err != nil {
		return "", fmt.Errorf("%w: geometry: %v", store.ErrInvalid, err)
	}
	return string(raw), nil
}

// sqlArgs builds a positional argument list.
type sqlArgs []any

func (a *sqlArgs) add(v any) string {
	*a = append(*a, v)
	return fmt.Sprintf("$%d", len(*a))
}

// spatialPredicate returns SQL testing column col against boxes and/or a geometry, each at
// every store.QueryShifts offset (see store.RegionFilter). ST_Intersects is index-assisted.
func spatialPredicate(col string, args *sqlArgs, boxes []orb.Bound, g orb.Geometry) (string, error) {
	var and []string
	if len(boxes) > 0 {
		var or []string
		for _, b := range boxes {
			for _, d := range store.QueryShifts {
				or = append(or, fmt.Sprintf("ST_Intersects(%s, ST_MakeEnvelope(%s::float8, %s::float8, %s::float8, %s::float8, 4326))",
					col, args.add(b.Min[0]+d), args.add(b.Min[1]), args.add(b.Max[0]+d), args.add(b.Max[1])))
			}
		}
		and = append(and, "("+strings.Join(or, " OR ")+")")
	}
	if g != nil {
		gj, err := geoJSON(g)
		if err != nil {
			return "", err
		}
		p := args.add(gj)
		var or []string
		for _, d := range store.QueryShifts {
			or = append(or, fmt.Sprintf("ST_Intersects(%s, ST_Translate(ST_SetSRID(ST_GeomFromGeoJSON(%s::text), 4326), %g, 0))", col, p, d))
		}
		and = append(and, "("+strings.Join(or, " OR ")+")")
	}
	if len(and) == 0 {
		return "TRUE", nil
	}
	return strings.Join(and, " AND "), nil
}

func nullIfEmpty(s string) any {
	if s == "" {
		return nil
	}
	return s
}

func deref(s *string) string {
	if s == nil {
		return ""
	}
	return *s
}

func (s *Store) importCatalogue() gridimport.Catalogue {
	return gridimport.Catalogue{ByHash: s.GetGridByHash, Insert: s.insertGrid, Sweep: s.Sweep}
}

// collect reads every row with scan (pgx.CollectRows closes rows).
func collect[T any](rows pgx.Rows, scan func(pgx.Row) (T, error)) ([]T, error) {
	return pgx.CollectRows(rows, func(r pgx.CollectableRow) (T, error) { return scan(r) })
}

// getByID runs a one-row query whose only parameter is id; no row is store.ErrNotFound for the
// entity named what.
func getByID[T any](ctx context.Context, s *Store, scan func(pgx.Row) (T, error), what, id, query string) (T, error) {
	v, err := scan(s.pool.QueryRow(ctx, query, id))
	if errors.Is(err, pgx.ErrNoRows) {
		var zero T
		return zero, notFound(what, id)
	}
	return v, err
}

// listPage runs a list query whose two parameters are p's limit and offset.
func listPage[T any](ctx context.Context, s *Store, scan func(pgx.Row) (T, error), what, query string, p store.Page) ([]T, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	rows, err := s.pool.Query(ctx, query, p.EffectiveLimit(), p.Offset)
	if err != nil {
		return nil, fmt.Errorf("listing %s: %w", what, err)
	}
	return collect(rows, scan)
}
