package postgis

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net"
	"strings"
	"syscall"

	"github.com/jackc/pgx/v5/pgconn"

	"ridgeflank/store"
)

// unavailable wraps *err with store.ErrUnavailable when it says the database cannot be reached
// now (see connectionFailure). Every exported method defers it, so that callers can tell an
// outage (retry later) from a fault of the request or of the service.
func unavailable(err *error) {
	if *err != nil && !errors.Is(*err, store.ErrUnavailable) && connectionFailure(*err) {
		*err = fmt.Errorf("%w: %w", store.ErrUnavailable, *err)
	}
}

// connectionFailure reports whether err comes from the connection rather than the statement:
//   - a connection could not be made (pgconn.ConnectError: refused, unreachable, the connect
//     timeout, authentication to a server that is starting up);
//   - SQLSTATE class 08 (connection exception) or 57P01 admin_shutdown, 57P02 crash_shutdown,
//     57P03 cannot_connect_now (PostgreSQL 15 manual, appendix A, "PostgreSQL Error Codes");
//   - a connection lost in use (EOF, reset, broken pipe, other network operations, or pgconn's
//     "conn closed"), unless the request's own context ended first.
//
// Errors of the grid files (a full disk, a missing file) are not connection failures.
func connectionFailure(err error) bool {
	var ce *pgconn.ConnectError
	if errors.As(err, &ce) {
		return true
	}
	var pe *pgconn.PgError
	if errors.As(err, &pe) {
		switch pe.Code {
		case "57P01", "57P02", "57P03":
			return true
		}
		return strings.HasPrefix(pe.Code, "08")
	}
	if errors.Is(err, context.Canceled) || errors.Is(err, context.DeadlineExceeded) || errors.Is(err, store.ErrInsufficientStorage) {
		return false
	}
	// *net.OpError, not the net.Error interface: every syscall.Errno (ENOSPC from a grid file
	// included) satisfies net.Error.
	var oe *net.OpError
	if errors.As(err, &oe) {
		return true
	}
	for _, e := range []error{io.EOF, io.ErrUnexpectedEOF, syscall.ECONNRESET, syscall.ECONNREFUSED, syscall.EPIPE} {
		if errors.Is(err, e) {
			return true
		}
	}
	// Errors pgconn marks safe to retry were raised before the statement reached the server
	// (a closed or busy connection); context errors are excluded above.
	return pgconn.SafeToRetry(err)
}
