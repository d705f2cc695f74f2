package migrations

import (
	"database/sql"
	"embed"
	"fmt"
	"io/fs"

	"github.com/pressly/goose/v3"
	"github.com/pressly/goose/v3/lock"
)

//go:embed postgres/*.sql sqlite/*.sql
var files embed.FS

// Dialect names a schema variant.
type Dialect string

// The two schema variants.
const (
	Postgres Dialect = "postgres" // PostgreSQL 13+ with PostGIS 3
	SQLite   Dialect = "sqlite"   // SQLite 3.37+ (STRICT tables, R*Tree)
)

// TableName is the table in which goose records applied versions.
const TableName = "goose_db_version"

// lockID is the PostgreSQL advisory lock key held while migrating, so that several
// processes starting at once apply each migration exactly once. Any fixed number works;
// this one is the ASCII bytes of "ridgeflk" read as a big-endian int64.
const lockID int64 = 0x7269646765666c6b

// FS returns the migration files of one dialect (file names NNNNN_name.sql).
func FS(d Dialect) (fs.FS, error) {
	switch d {
	case Postgres, SQLite:
		return fs.Sub(files, string(d))
	default:
		return nil, fmt.Errorf("migrations: unknown dialect %q", d)
	}
}

// NewProvider returns a goose provider for the given dialect and database handle.
// For PostgreSQL it holds a session advisory lock while migrating.
// Extra options are appended to the defaults.
func NewProvider(d Dialect, db *sql.DB, opts ...goose.ProviderOption) (*goose.Provider, error) {
	fsys, err := FS(d)
	if err != nil {
		return nil, err
	}
	var gd goose.Dialect
	base := []goose.ProviderOption{goose.WithDisableGlobalRegistry(true)}
	switch d {
	case Postgres:
		gd = goose.DialectPostgres
		locker, err := lock.NewPostgresSessionLocker(lock.WithLockID(lockID))
		if err != nil {
			return nil, fmt.Errorf("migrations: %w", err)
		}
		base = append(base, goose.WithSessionLocker(locker))
	case SQLite:
		gd = goose.DialectSQLite3
	}
	p, err := goose.NewProvider(gd, db, fsys, append(base, opts...)...)
	if err != nil {
		return nil, fmt.Errorf("migrations: %w", err)
	}
	return p, nil
}
