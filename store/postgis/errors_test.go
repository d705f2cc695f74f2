package postgis

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net"
	"os"
	"syscall"
	"testing"

	"github.com/jackc/pgx/v5/pgconn"

	"ridgeflank/store"
)

// SQLSTATE codes from the PostgreSQL 15 manual, appendix A ("PostgreSQL Error Codes").
func TestConnectionFailure(t *testing.T) {
	reset := &net.OpError{Op: "read", Net: "tcp", Err: os.NewSyscallError("read", syscall.ECONNRESET)}
	cases := []struct {
		name string
		err  error
		want bool
	}{
		{"connect error", &pgconn.ConnectError{}, true},
		{"admin_shutdown 57P01", &pgconn.PgError{Code: "57P01"}, true},
		{"crash_shutdown 57P02", &pgconn.PgError{Code: "57P02"}, true},
		{"cannot_connect_now 57P03", &pgconn.PgError{Code: "57P03"}, true},
		{"connection_failure 08006", &pgconn.PgError{Code: "08006"}, true},
		{"unique_violation 23505", &pgconn.PgError{Code: "23505"}, false},
		{"query_canceled 57014", &pgconn.PgError{Code: "57014"}, false},
		{"connection reset", fmt.Errorf("listing: %w", reset), true},
		{"unexpected EOF", fmt.Errorf("receive message failed: %w", io.ErrUnexpectedEOF), true},
		{"request deadline", fmt.Errorf("query: %w", context.DeadlineExceeded), false},
		{"request cancelled", context.Canceled, false},
		{"full disk", fmt.Errorf("writing grid file: %w", &os.PathError{Op: "write", Path: "x", Err: syscall.ENOSPC}), false},
		{"full disk, classified", store.NoSpace(&os.PathError{Op: "write", Path: "x", Err: syscall.ENOSPC}), false},
		{"missing grid file", &os.PathError{Op: "open", Path: "x", Err: syscall.ENOENT}, false},
		{"not found", store.ErrNotFound, false},
	}
	for _, c := range cases {
		if got := connectionFailure(c.err); got != c.want {
			t.Errorf("%s: connectionFailure = %v, want %v", c.name, got, c.want)
		}
		err := c.err
		unavailable(&err)
		if errors.Is(err, store.ErrUnavailable) != c.want || !errors.Is(err, c.err) {
			t.Errorf("%s: wrapped as %v", c.name, err)
		}
	}
}
