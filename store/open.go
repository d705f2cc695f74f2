package store

import (
	"context"
	"fmt"
	"log/slog"
	"path/filepath"
	"sort"
	"strings"
	"sync"
)

// Config selects and configures a store.
type Config struct {
	// DatabaseURL selects PostGIS (postgres:// or postgresql:// URL, or a key=value DSN containing
	// host=...). Empty selects the embedded SQLite store in DataDir.
	DatabaseURL string
	// DataDir holds ridgeflank.db (SQLite) and, by default, the grid directory. Default "./data".
	DataDir string
	// GridDir overrides the grid directory (default DataDir/grids).
	GridDir string
	// NoAutoMigrate skips applying pending migrations at Open (run `ridgeflank migrate` instead).
	NoAutoMigrate bool
	// Logger receives start-up notes (sweeps, migrations). Default slog.Default().
	Logger *slog.Logger
}

// DefaultDataDir is used when Config.DataDir is empty.
const DefaultDataDir = "./data"

// SQLiteFileName is the database file inside the data directory.
const SQLiteFileName = "ridgeflank.db"

// WithDefaults returns c with DataDir, GridDir and Logger filled in.
func (c Config) WithDefaults() Config {
	if c.DataDir == "" {
		c.DataDir = DefaultDataDir
	}
	if c.GridDir == "" {
		c.GridDir = filepath.Join(c.DataDir, "grids")
	}
	if c.Logger == nil {
		c.Logger = slog.Default()
	}
	return c
}

// Backend names.
const (
	BackendSQLite  = "sqlite"
	BackendPostGIS = "postgis"
)

// BackendFor returns the backend a configuration selects.
func (c Config) BackendFor() (string, error) {
	u := strings.TrimSpace(c.DatabaseURL)
	switch {
	case u == "":
		return BackendSQLite, nil
	case strings.HasPrefix(u, "postgres://"), strings.HasPrefix(u, "postgresql://"), strings.Contains(u, "host="), strings.Contains(u, "dbname="):
		return BackendPostGIS, nil
	}
	return "", fmt.Errorf("%w: database URL must start with postgres:// or postgresql://", ErrInvalid)
}

// OpenFunc opens one backend.
type OpenFunc func(ctx context.Context, cfg Config) (Store, error)

var (
	driversMu sync.Mutex
	drivers   = map[string]OpenFunc{}
)

// Register makes a backend available to Open. The backend packages call it from init, so a
// program opens stores after importing them (for example with a blank import of
// ridgeflank/store/sqlite and ridgeflank/store/postgis).
func Register(backend string, open OpenFunc) {
	driversMu.Lock()
	defer driversMu.Unlock()
	drivers[backend] = open
}

// Open opens the store a configuration selects: PostGIS when DatabaseURL is set, otherwise
// SQLite in DataDir. Pending migrations are applied unless NoAutoMigrate, and a sweep of the
// grid directory runs (see Store.Sweep).
func Open(ctx context.Context, cfg Config) (Store, error) {
	cfg = cfg.WithDefaults()
	b, err := cfg.BackendFor()
	if err != nil {
		return nil, err
	}
	driversMu.Lock()
	open := drivers[b]
	var names []string
	for n := range drivers {
		names = append(names, n)
	}
	driversMu.Unlock()
	if open == nil {
		sort.Strings(names)
		return nil, fmt.Errorf("store: backend %q is not compiled in (registered: %v); import ridgeflank/store/%s", b, names, b)
	}
	return open(ctx, cfg)
}
