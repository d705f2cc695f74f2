//go:build !(linux || darwin || freebsd || netbsd || openbsd || dragonfly)

package store

import "sync"

// Without flock(2) leases and sweeps exclude each other within this process only.
var (
	lockMu      sync.Mutex
	lockShared  = map[string]int{}
	lockHeldExc = map[string]bool{}
)

type dirLock struct {
	path      string
	exclusive bool
}

func tryLock(path string, exclusive bool) (*dirLock, bool, error) {
	lockMu.Lock()
	defer lockMu.Unlock()
	if lockHeldExc[path] || (exclusive && lockShared[path] > 0) {
		return nil, false, nil
	}
	if exclusive {
		lockHeldExc[path] = true
	} else {
		lockShared[path]++
	}
	return &dirLock{path: path, exclusive: exclusive}, true, nil
}

func (l *dirLock) unlock() {
	lockMu.Lock()
	defer lockMu.Unlock()
	if l.exclusive {
		delete(lockHeldExc, l.path)
	} else {
		lockShared[l.path]--
	}
}
