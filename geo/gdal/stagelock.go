package gdal

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"time"
)

// stagePattern names staging files in their directory (os.CreateTemp's pattern).
const stagePattern = "ridgeflank-stage-*.tif"

// stageLockSuffix marks the lock file beside a staging file: the process writing the staging
// file holds an exclusive flock(2) on it for the stream's life. The kernel drops the lock when
// the process dies, however it dies (SIGKILL included), so a lock that can be taken names a
// staging file nobody writes any more.
const stageLockSuffix = ".lock"

// lockStage creates and locks the lock file of the staging file path.
func lockStage(path string) (*os.File, error) {
	f, err := os.OpenFile(path+stageLockSuffix, os.O_CREATE|os.O_RDWR, 0o600)
	if err != nil {
		return nil, err
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		return nil, err
	}
	return f, nil
}

// orphanStageAge is how old a staging file without a lock file must be before SweepStaging
// removes it (files left by a process that died between creating the file and its lock).
const orphanStageAge = 24 * time.Hour

// SweepStaging removes the staging files in dir ("" = os.TempDir(), where imports and the grid
// command stage) that no live process writes: those whose lock can be taken, and those without
// a lock file older than a day. A staging file of a stream in progress, in this process or in
// another one on the same machine, is never removed. It returns the number of staging files
// removed.
func SweepStaging(dir string) (int, error) {
	if dir == "" {
		dir = os.TempDir()
	}
	files, err := filepath.Glob(filepath.Join(dir, stagePattern))
	if err != nil {
		return 0, err
	}
	removed := 0
	var errs []error
	for _, path := range files {
		if strings.HasSuffix(path, stageLockSuffix) {
			continue
		}
		lock, err := os.OpenFile(path+stageLockSuffix, os.O_RDWR, 0)
		if errors.Is(err, os.ErrNotExist) {
			if fi, err := os.Stat(path); err != nil || time.Since(fi.ModTime()) < orphanStageAge {
				continue
			}
		} else if err != nil {
			errs = append(errs, err)
			continue
		} else if syscall.Flock(int(lock.Fd()), syscall.LOCK_EX|syscall.LOCK_NB) != nil {
			lock.Close() // held: a stream in progress
			continue
		}
		if err := removeStage(path); err != nil {
			errs = append(errs, err)
		} else {
			removed++
		}
		if lock != nil {
			lock.Close()
		}
	}
	return removed, errors.Join(errs...)
}

// removeStage removes a staging file, GDAL's side files beside it (.ovr, .aux.xml) and its
// lock file; the lock file goes last, so a sweeper never sees a staging file without its lock
// while the stream still holds it.
func removeStage(path string) error {
	err := os.Remove(path)
	if errors.Is(err, os.ErrNotExist) {
		err = nil
	}
	side, _ := filepath.Glob(path + ".*")
	for _, f := range side {
		if !strings.HasSuffix(f, stageLockSuffix) {
			os.Remove(f)
		}
	}
	os.Remove(path + stageLockSuffix)
	return err
}
