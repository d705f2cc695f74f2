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
	// GridStore, when set to s3://bucket/prefix, keeps the grid files in that S3-compatible
	// bucket instead of GridDir (see ObjectStore; the s3 backend is registered by importing
	// ridgeflank/store/s3blob). Empty uses GridDir.
	GridStore string
	// ObjectStore configures the client of an s3:// GridStore.
	ObjectStore ObjectStoreConfig
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

// ObjectStoreConfig says how to reach an S3-compatible object store.
type ObjectStoreConfig struct {
	// Endpoint is the server's base URL (http://host:port or https://host); empty means
	// the AWS S3 endpoint of Region.
	Endpoint string
	// Region signs the requests (default us-east-1; most S3-compatible servers ignore it).
	Region string
	// AccessKeyID and SecretAccessKey are the credentials. They come from the environment
	// only (never from a flag, which other users of the host could read), and are never
	// printed: Secret formats as "[redacted]".
	AccessKeyID     string
	SecretAccessKey Secret
	// CreateBucket creates the bucket when it does not exist (for a fresh object store in a
	// compose file or a test); otherwise a missing bucket is an error.
	CreateBucket bool
	// PartSizeBytes is the part size of multipart uploads; files larger than one part are
	// uploaded in parts. Default (0) 64 MiB; at least 5 MiB (the S3 minimum).
	PartSizeBytes int64
}

// Secret is a string that is never formatted: fmt, slog and encoders print "[redacted]".
type Secret string

const redacted = "[redacted]"

// Reveal returns the secret's value.
func (s Secret) Reveal() string { return string(s) }

// String implements fmt.Stringer.
func (s Secret) String() string { return redacted }

// GoString implements fmt.GoStringer (%#v).
func (s Secret) GoString() string { return redacted }

// LogValue implements slog.LogValuer.
func (s Secret) LogValue() slog.Value { return slog.StringValue(redacted) }

// MarshalText implements encoding.TextMarshaler (JSON, text encoders).
func (s Secret) MarshalText() ([]byte, error) { return []byte(redacted), nil }

// Grid store schemes.
const (
	GridStoreDir = "dir"
	GridStoreS3  = "s3"
)

// BlobsOpenFunc opens one kind of grid store.
type BlobsOpenFunc func(ctx context.Context, cfg Config) (Blobs, error)

var blobDrivers = map[string]BlobsOpenFunc{}

// RegisterBlobs makes a grid store scheme (such as "s3") available to OpenBlobs; its package
// calls it from init.
func RegisterBlobs(scheme string, open BlobsOpenFunc) {
	driversMu.Lock()
	defer driversMu.Unlock()
	blobDrivers[scheme] = open
}

// OpenBlobs opens the grid store a configuration selects: the bucket of GridStore
// (s3://bucket/prefix) or else the directory GridDir. Backends call it from their Open.
func OpenBlobs(ctx context.Context, cfg Config) (Blobs, error) {
	cfg = cfg.WithDefaults()
	gs := strings.TrimSpace(cfg.GridStore)
	if gs == "" {
		return NewGridFiles(cfg.GridDir)
	}
	scheme, _, ok := strings.Cut(gs, "://")
	if !ok || scheme != GridStoreS3 {
		return nil, fmt.Errorf("%w: grid store %q: want s3://bucket/prefix (or no grid store for the grid directory)", ErrInvalid, gs)
	}
	driversMu.Lock()
	open := blobDrivers[scheme]
	driversMu.Unlock()
	if open == nil {
		return nil, fmt.Errorf("store: grid store %q is not compiled in; import ridgeflank/store/s3blob", scheme)
	}
	return open(ctx, cfg)
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
