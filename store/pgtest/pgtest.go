package pgtest

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"net/url"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// TemplateName is the template database (created with the postgis extension when missing;
// scripts/test-db.sh creates it too).
const TemplateName = "ridgeflank_template"

// DefaultURL is used when neither DATABASE_URL nor RIDGEFLANK_TEST_DATABASE_URL is set.
const DefaultURL = "postgres://postgres@127.0.0.1:5432/postgres?sslmode=disable"

// lockID serialises template creation between test processes (ASCII "rftmpl" as an integer).
const lockID int64 = 0x7266746d706c

// AdminURL returns the server URL tests use: DATABASE_URL, else RIDGEFLANK_TEST_DATABASE_URL,
// else DefaultURL.
func AdminURL() string {
	for _, k := range []string{"DATABASE_URL", "RIDGEFLANK_TEST_DATABASE_URL"} {
		if v := strings.TrimSpace(os.Getenv(k)); v != "" {
			return v
		}
	}
	return DefaultURL
}

// NewDB creates a fresh database from the template and returns its URL; the database is
// dropped when the test ends. When the server cannot be reached the test is skipped, or fails
// if the environment variable CI is set.
func NewDB(t testing.TB) string {
	t.Helper()
	admin := AdminURL()
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	conn, err := connect(ctx, admin)
	if err != nil {
		if os.Getenv("CI") != "" {
			t.Fatalf("pgtest: PostgreSQL at %s is required when CI is set: %v (run scripts/test-db.sh)", redact(admin), err)
		}
		t.Skipf("pgtest: PostgreSQL not reachable at %s (%v); run scripts/test-db.sh or set DATABASE_URL", redact(admin), err)
	}
	defer conn.Close(context.Background())
	if err := ensureTemplate(ctx, conn, admin); err != nil {
		t.Fatalf("pgtest: template database: %v", err)
	}
	name := "rft_" + randomHex(8)
	if err := createFromTemplate(ctx, conn, name); err != nil {
		t.Fatalf("pgtest: creating database: %v", err)
	}
	dbURL, err := WithDatabase(admin, name)
	if err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	t.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		defer cancel()
		c, err := connect(ctx, admin)
		if err != nil {
			t.Errorf("pgtest: dropping %s: %v", name, err)
			return
		}
		defer c.Close(ctx)
		if _, err := c.Exec(ctx, "DROP DATABASE IF EXISTS "+pgx.Identifier{name}.Sanitize()+" WITH (FORCE)"); err != nil {
			t.Errorf("pgtest: dropping %s: %v", name, err)
		}
	})
	return dbURL
}

func connect(ctx context.Context, dsn string) (*pgx.Conn, error) {
	cfg, err := pgx.ParseConfig(dsn)
	if err != nil {
		return nil, err
	}
	if cfg.ConnectTimeout == 0 || cfg.ConnectTimeout > 5*time.Second {
		cfg.ConnectTimeout = 5 * time.Second
	}
	return pgx.ConnectConfig(ctx, cfg)
}

// ensureTemplate creates the template with postgis once; an advisory lock keeps concurrent
// test processes from racing.
func ensureTemplate(ctx context.Context, conn *pgx.Conn, admin string) error {
	if _, err := conn.Exec(ctx, "SELECT pg_advisory_lock($1)", lockID); err != nil {
		return err
	}
	defer conn.Exec(context.Background(), "SELECT pg_advisory_unlock($1)", lockID)
	var exists bool
	if err := conn.QueryRow(ctx, "SELECT EXISTS (SELECT 1 FROM pg_database WHERE datname = $1)", TemplateName).Scan(&exists); err != nil {
		return err
	}
	if exists {
		return nil
	}
	tmp := TemplateName + "_build_" + randomHex(4)
	if _, err := conn.Exec(ctx, "CREATE DATABASE "+pgx.Identifier{tmp}.Sanitize()); err != nil {
		return err
	}
	drop := func() {
		conn.Exec(context.Background(), "DROP DATABASE IF EXISTS "+pgx.Identifier{tmp}.Sanitize()+" WITH (FORCE)")
	}
	u, err := WithDatabase(admin, tmp)
	if err != nil {
		drop()
		return err
	}
	c, err := connect(ctx, u)
	if err != nil {
		drop()
		return err
	}
	_, err = c.Exec(ctx, "CREATE EXTENSION IF NOT EXISTS postgis")
	c.Close(context.Background())
	if err != nil {
		drop()
		return fmt.Errorf("CREATE EXTENSION postgis (is postgresql-15-postgis-3 installed?): %w", err)
	}
	// Build under a temporary name and rename, so an interrupted build never leaves a
	// template without postgis.
	if _, err := conn.Exec(ctx, "ALTER DATABASE "+pgx.Identifier{tmp}.Sanitize()+" RENAME TO "+pgx.Identifier{TemplateName}.Sanitize()); err != nil {
		drop()
		return err
	}
	_, err = conn.Exec(ctx, "ALTER DATABASE "+pgx.Identifier{TemplateName}.Sanitize()+" WITH is_template true")
	return err
}

// createFromTemplate retries while another session briefly uses the template
// (SQLSTATE 55006, "source database is being accessed by other users").
func createFromTemplate(ctx context.Context, conn *pgx.Conn, name string) error {
	q := "CREATE DATABASE " + pgx.Identifier{name}.Sanitize() + " TEMPLATE " + pgx.Identifier{TemplateName}.Sanitize()
	for {
		_, err := conn.Exec(ctx, q)
		var pe *pgconn.PgError
		if err == nil || !errors.As(err, &pe) || pe.Code != "55006" {
			return err
		}
		select {
		case <-ctx.Done():
			return err
		case <-time.After(100 * time.Millisecond):
		}
	}
}

// WithDatabase returns dsn (URL or key=value form) pointing at database name.
func WithDatabase(dsn, name string) (string, error) {
	if strings.HasPrefix(dsn, "postgres://") || strings.HasPrefix(dsn, "postgresql://") {
		u, err := url.Parse(dsn)
		if err != nil {
			return "", fmt.Errorf("database URL: %w", err)
		}
		u.Path = "/" + name
		u.RawPath = ""
		return u.String(), nil
	}
	return dsn + " dbname=" + name, nil
}

func randomHex(n int) string {
	b := make([]byte, n)
	rand.Read(b)
	return hex.EncodeToString(b)
}

// redact hides a password in a URL for messages.
func redact(dsn string) string {
	if u, err := url.Parse(dsn); err == nil && u.User != nil {
		if _, ok := u.User.Password(); ok {
			u.User = url.UserPassword(u.User.Username(), "xxxxx")
		}
		return u.String()
	}
	if strings.Contains(dsn, "password=") {
		return "(key=value DSN with password)"
	}
	return dsn
}
