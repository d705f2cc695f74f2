package server

import (
	"container/list"
	"sync"
)

// tileCache keeps encoded map tiles (PNG bytes before the caution chunk) by entity tag, least
// recently used first out, within a budget in bytes. A tile's ETag changes whenever its picture
// could (evaluate.TilePlan.ETag: software version, parameter, address, colour binding and range,
// the grids' content hashes, the model's parameters, the compaction law, the age uncertainty),
// so a tile found under its tag is the one rendering would give, byte for byte. Safe for
// concurrent use; a nil cache keeps nothing.
type tileCache struct {
	mu     sync.Mutex
	budget int
	used   int
	ll     *list.List
	items  map[string]*list.Element
}

type cachedTile struct {
	etag string
	png  []byte
}

// newTileCache returns a cache of at most budget bytes of tiles (nil, no cache, for a budget
// of 0 or less).
func newTileCache(budget int64) *tileCache {
	if budget <= 0 {
		return nil
	}
	return &tileCache{budget: int(budget), ll: list.New(), items: map[string]*list.Element{}}
}

// get returns the tile stored under etag.
func (c *tileCache) get(etag string) ([]byte, bool) {
	if c == nil {
		return nil, false
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	e, ok := c.items[etag]
	if !ok {
		return nil, false
	}
	c.ll.MoveToFront(e)
	return e.Value.(*cachedTile).png, true
}

// put stores a rendered tile (the cache keeps png: the caller must not change it), counted by
// its capacity. A tile over an eighth of the budget is not kept.
func (c *tileCache) put(etag string, png []byte) {
	if c == nil || cap(png) > c.budget/8 {
		return
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.items[etag]; ok {
		return
	}
	c.items[etag] = c.ll.PushFront(&cachedTile{etag, png})
	c.used += cap(png) + len(etag) // the memory held, not only the bytes used
	for c.used > c.budget {
		e := c.ll.Back()
		t := e.Value.(*cachedTile)
		c.ll.Remove(e)
		delete(c.items, t.etag)
		c.used -= cap(t.png) + len(t.etag)
	}
}
