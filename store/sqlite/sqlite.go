package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"log/slog"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"github.com/pressly/goose/v3"
	msqlite "modernc.org/sqlite"
	sqlite3 "modernc.org/sqlite/lib"

	"ridgeflank/migrations"
	"ridgeflank/store"
	"ridgeflank/store/internal/gridimport"
)

func init() {
	store.Register(store.BackendSQLite, func(ctx context.Context, cfg store.Config) (store.Store, error) {
		return Open(ctx, cfg)
	})
}

// BusyTimeout is how long a connection waits for another writer (another process, or River
// sharing the handle) before a write fails with "database is locked".
const BusyTimeout = 10 * time.Second

// Store is the embedded SQLite store. It is safe for concurrent use.
type Store struct {
	db    *sql.DB
	path  string
	blobs store.Blobs
	log   *slog.Logger
	// wmu serialises this process's write transactions (SQLite has one writer at a time;
	// queuing here avoids busy-waiting). Other processes are handled by busy_timeout.
	wmu sync.Mutex
}

var _ store.Store = (*Store)(nil)

// DSN returns the modernc.org/sqlite data source name the store uses for a database file:
// WAL journal, synchronous=FULL (a committed transaction survives power loss), foreign keys
// on, busy_timeout, and BEGIN IMMEDIATE for transactions (so a transaction that reads then
// writes never fails half-way on a lock upgrade). River can open the same DSN.
func DSN(path string) string {
	q := url.Values{}
	q.Add("_pragma", fmt.Sprintf("busy_timeout(%d)", BusyTimeout.Milliseconds()))
	q.Add("_pragma", "journal_mode(WAL)")
	q.Add("_pragma", "synchronous(FULL)")
	q.Add("_pragma", "foreign_keys(ON)")
	q.Set("_txlock", "immediate")
	return path + "?" + q.Encode()
}

// Open opens (creating if needed) DataDir/ridgeflank.db and the grid directory, applies pending
// migrations unless cfg.NoAutoMigrate, and sweeps the grid directory.
func Open(ctx context.Context, cfg store.Config) (*Store, error) {
	cfg = cfg.WithDefaults()
	if err := os.MkdirAll(cfg.DataDir, 0o755); err != nil {
		return nil, fmt.Errorf("sqlite store: data directory: %w", err)
	}
	path := filepath.Join(cfg.DataDir, store.SQLiteFileName)
	if strings.ContainsAny(path, "?#") {
		return nil, fmt.Errorf("%w: data directory path must not contain '?' or '#'", store.ErrInvalid)
	}
	blobs, err := store.OpenBlobs(ctx, cfg)
	if err != nil {
		return nil, err
	}
	db, err := sql.Open("sqlite", DSN(path))
	if err != nil {
		return nil, fmt.Errorf("sqlite store: %w", err)
	}
	db.SetMaxOpenConns(8)
	db.SetMaxIdleConns(8)
	db.SetConnMaxIdleTime(5 * time.Minute)
	s := &Store{db: db, path: path, blobs: blobs, log: cfg.Logger}
	if err := store.StartUp(ctx, s, s.log, cfg.NoAutoMigrate); err != nil {
		db.Close()
		return nil, err
	}
	return s, nil
}

// DB returns the underlying handle (for River). Write transactions begin IMMEDIATE.
func (s *Store) DB() *sql.DB { return s.db }

// Path returns the database file path.
func (s *Store) Path() string { return s.path }

// Backend implements store.Store.
func (s *Store) Backend() string { return store.BackendSQLite }

// Blobs implements store.Store.
func (s *Store) Blobs() store.Blobs { return s.blobs }

// Close implements store.Store.
func (s *Store) Close() error { return s.db.Close() }

// Ping implements store.Store.
func (s *Store) Ping(ctx context.Context) error {
	if err := s.db.PingContext(ctx); err != nil {
		return fmt.Errorf("sqlite store: %w", err)
	}
	return nil
}

func (s *Store) provider() (*goose.Provider, error) {
	return migrations.NewProvider(migrations.SQLite, s.db)
}

// Migrate implements store.Store.
func (s *Store) Migrate(ctx context.Context) ([]string, error) {
	s.wmu.Lock()
	defer s.wmu.Unlock()
	p, err := s.provider()
	if err != nil {
		return nil, err
	}
	res, err := p.Up(ctx)
	if err != nil {
		// Another process may have migrated at the same moment; retry once from its result.
		if pending, err2 := p.HasPending(ctx); err2 == nil && !pending {
			return nil, nil
		}
		return nil, fmt.Errorf("sqlite store: migrating: %w", err)
	}
	var names []string
	for _, r := range res {
		names = append(names, filepath.Base(r.Source.Path))
	}
	return names, nil
}

// MigrationsApplied implements store.Store.
func (s *Store) MigrationsApplied(ctx context.Context) (bool, error) {
	p, err := s.provider()
	if err != nil {
		return false, err
	}
	pending, err := p.HasPending(ctx)
	if err != nil {
		return false, fmt.Errorf("sqlite store: %w", err)
	}
	return !pending, nil
}

// MigrationStatus implements store.Store.
func (s *Store) MigrationStatus(ctx context.Context) ([]store.MigrationStatus, error) {
	p, err := s.provider()
	if err != nil {
		return nil, err
	}
	st, err := p.Status(ctx)
	if err != nil {
		return nil, fmt.Errorf("sqlite store: %w", err)
	}
	out := make([]store.MigrationStatus, 0, len(st))
	for _, m := range st {
		out = append(out, store.MigrationStatus{
			Version:   m.Source.Version,
			Source:    filepath.Base(m.Source.Path),
			Applied:   m.State == goose.StateApplied,
			AppliedAt: m.AppliedAt.UTC(),
		})
	}
	return out, nil
}

// Sweep implements store.Store.
func (s *Store) Sweep(ctx context.Context) ([]string, error) {
	var id string
	if err := s.db.QueryRowContext(ctx, `SELECT value FROM store_meta WHERE key = 'catalogue_id'`).Scan(&id); err != nil {
		return nil, fmt.Errorf("sqlite store: catalogue id: %w", err)
	}
	return s.blobs.Sweep(ctx, id, func(ctx context.Context) (map[string]bool, error) {
		rows, err := s.db.QueryContext(ctx, `SELECT path FROM grids`)
		if err != nil {
			return nil, err
		}
		defer rows.Close()
		ref := map[string]bool{}
		for rows.Next() {
			var p string
			if err := rows.Scan(&p); err != nil {
				return nil, err
			}
			ref[p] = true
		}
		return ref, rows.Err()
	})
}

// write runs fn in a write transaction (BEGIN IMMEDIATE), committing if it returns nil.
func (s *Store) write(ctx context.Context, fn func(tx *sql.Tx) error) error {
	s.wmu.Lock()
	defer s.wmu.Unlock()
	tx, err := s.db.BeginTx(ctx, nil)
	if err != nil {
		return mapErr(err)
	}
	if err := fn(tx); err != nil {
		tx.Rollback()
		return err
	}
	if err := tx.Commit(); err != nil {
		return mapErr(err)
	}
	return nil
}

// mapErr turns constraint violations into store errors.
func mapErr(err error) error {
	if err == nil {
		return nil
	}
	var se *msqlite.Error
	if errors.As(err, &se) {
		code := se.Code()
		if code&0xff == sqlite3.SQLITE_CONSTRAINT && strings.Contains(err.Error(), "FOREIGN KEY constraint failed") {
			// ON DELETE RESTRICT reports SQLITE_CONSTRAINT_TRIGGER, deferred checks SQLITE_CONSTRAINT_FOREIGNKEY.
			code = sqlite3.SQLITE_CONSTRAINT_FOREIGNKEY
		}
		switch code {
		case sqlite3.SQLITE_CONSTRAINT_PRIMARYKEY, sqlite3.SQLITE_CONSTRAINT_UNIQUE:
			return store.WithDetail(store.ErrConflict, "already exists", err)
		case sqlite3.SQLITE_CONSTRAINT_FOREIGNKEY:
			return store.WithDetail(store.ErrConflict, "still referenced or refers to a missing row", err)
		case sqlite3.SQLITE_CONSTRAINT_CHECK, sqlite3.SQLITE_CONSTRAINT_NOTNULL:
			return store.WithDetail(store.ErrInvalid, "a value breaks a rule of the store", err)
		}
		switch code & 0xff {
		case sqlite3.SQLITE_BUSY, sqlite3.SQLITE_LOCKED:
			// Another process held the write lock for longer than BusyTimeout.
			return fmt.Errorf("%w: the database stayed locked for %v: %w", store.ErrUnavailable, BusyTimeout, err)
		case sqlite3.SQLITE_FULL:
			return fmt.Errorf("%w: %w", store.ErrInsufficientStorage, err)
		}
	}
	return err
}

func micros(t time.Time) int64 { return t.UnixMicro() }

func fromMicros(v int64) time.Time { return time.UnixMicro(v).UTC() }

func optMicros(v sql.NullInt64) *time.Time {
	if !v.Valid {
		return nil
	}
	t := fromMicros(v.Int64)
	return &t
}

func nullStr(s string) sql.NullString { return sql.NullString{String: s, Valid: s != ""} }

// versionCheck explains why an update or delete matched no row.
func versionCheck(ctx context.Context, q interface {
	QueryRowContext(context.Context, string, ...any) *sql.Row
}, table, what, id string, expected int64) error {
	var v int64
	err := q.QueryRowContext(ctx, `SELECT version FROM `+table+` WHERE id = ?`, id).Scan(&v)
	if errors.Is(err, sql.ErrNoRows) {
		return fmt.Errorf("%s %q: %w", what, id, store.ErrNotFound)
	}
	if err != nil {
		return err
	}
	return fmt.Errorf("%s %q: %w: expected version %d, stored version %d", what, id, store.ErrVersionMismatch, expected, v)
}

func notFound(what, id string) error { return fmt.Errorf("%s %q: %w", what, id, store.ErrNotFound) }

// importCatalogue adapts the store to the shared import sequence.
func (s *Store) importCatalogue() gridimport.Catalogue {
	return gridimport.Catalogue{ByHash: s.GetGridByHash, Insert: s.insertGrid, Sweep: s.Sweep}
}

// collect reads every row with scan and closes rows.
func collect[T any](rows *sql.Rows, scan func(scanner) (T, error)) ([]T, error) {
	defer rows.Close()
	out := []T{}
	for rows.Next() {
		v, err := scan(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, v)
	}
	return out, rows.Err()
}

// collectPage is collect for a query without LIMIT and OFFSET whose rows are filtered in Go:
// rows keep refuses are dropped, then p's offset and limit apply to the rest.
func collectPage[T any](rows *sql.Rows, scan func(scanner) (T, error), keep func(T) bool, p store.Page) ([]T, error) {
	defer rows.Close()
	out := []T{}
	skip := p.Offset
	for len(out) < p.EffectiveLimit() && rows.Next() {
		v, err := scan(rows)
		if err != nil {
			return nil, err
		}
		if !keep(v) {
			continue
		}
		if skip > 0 {
			skip--
			continue
		}
		out = append(out, v)
	}
	return out, rows.Err()
}

// getByID runs a one-row query whose only parameter is id; no row is store.ErrNotFound for the
// entity named what.
func getByID[T any](ctx context.Context, s *Store, scan func(scanner) (T, error), what, id, query string) (T, error) {
	v, err := scan(s.db.QueryRowContext(ctx, query, id))
	if errors.Is(err, sql.ErrNoRows) {
		var zero T
		return zero, notFound(what, id)
	}
	return v, err
}

// listPage runs a list query whose two parameters are p's limit and offset.
func listPage[T any](ctx context.Context, s *Store, scan func(scanner) (T, error), what, query string, p store.Page) ([]T, error) {
	if err := p.Validate(); err != nil {
		return nil, err
	}
	rows, err := s.db.QueryContext(ctx, query, p.EffectiveLimit(), p.Offset)
	if err != nil {
		return nil, fmt.Errorf("listing %s: %w", what, err)
	}
	return collect(rows, scan)
}
