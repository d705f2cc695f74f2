//go:build linux || darwin || freebsd

package store

import (
	"errors"
	"fmt"
	"syscall"
)

// FreeBytes returns the space available to an unprivileged writer in the file system holding
// path (statfs(2): f_bavail × f_bsize).
func FreeBytes(path string) (int64, error) {
	var st syscall.Statfs_t
	if err := syscall.Statfs(path, &st); err != nil {
		return 0, fmt.Errorf("free space of %s: %w", path, err)
	}
	return int64(st.Bavail) * int64(st.Bsize), nil
}

// NoSpace wraps err with ErrInsufficientStorage when the file system is full (ENOSPC) or the
// writer's quota is used up (EDQUOT); any other error is returned as it is.
func NoSpace(err error) error {
	if err != nil && !errors.Is(err, ErrInsufficientStorage) && (errors.Is(err, syscall.ENOSPC) || errors.Is(err, syscall.EDQUOT)) {
		return fmt.Errorf("%w: %w", ErrInsufficientStorage, err)
	}
	return err
}
