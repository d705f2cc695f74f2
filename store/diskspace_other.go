//go:build !(linux || darwin || freebsd)

package store

import (
	"errors"
	"fmt"
)

// FreeBytes is not available on this platform: it fails, and callers skip free-space checks.
func FreeBytes(path string) (int64, error) {
	return 0, fmt.Errorf("free space of %s: %w", path, errors.ErrUnsupported)
}

// NoSpace returns err as it is on this platform.
func NoSpace(err error) error { return err }
