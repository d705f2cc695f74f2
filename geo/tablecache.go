package geo

import "sync"

// tableCache keeps lookup tables built on first use, shared by every evaluation: at most max
// of them (a table asked for beyond that is built and used but not kept, so memory stays
// bounded whatever the questions). Two callers asking for the same missing key at once may both
// build it; the tables are deterministic, so either copy serves. Safe for concurrent use.
type tableCache[K comparable, V any] struct {
	mu  sync.Mutex
	m   map[K]V
	max int
}

func newTableCache[K comparable, V any](max int) *tableCache[K, V] {
	return &tableCache[K, V]{m: make(map[K]V), max: max}
}

// get returns the table of key, building it with build when it is not kept.
func (c *tableCache[K, V]) get(key K, build func() (V, error)) (V, error) {
	c.mu.Lock()
	v, ok := c.m[key]
	c.mu.Unlock()
	if ok {
		return v, nil
	}
	v, err := build()
	if err != nil {
		return v, err
	}
	c.mu.Lock()
	if len(c.m) < c.max {
		c.m[key] = v
	}
	c.mu.Unlock()
	return v, nil
}

// must is get for builders that cannot fail.
func (c *tableCache[K, V]) must(key K, build func() V) V {
	v, _ := c.get(key, func() (V, error) { return build(), nil })
	return v
}
