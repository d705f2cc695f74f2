package raster

import (
	"container/list"
	"sync"
	"sync/atomic"

	"golang.org/x/sync/singleflight"
)

// BlockSize is the width and height, in cells, of the blocks Cache holds: the block size of the
// COG files ridgeflank stores, so one cached block is one decompressed file tile.
const BlockSize = 512

// blockKey names one block: the file's content key, its level and the block's column and row.
type blockKey struct {
	file          string
	level, bx, by int
}

// Cache keeps decoded blocks (float32 cells, NaN = no data) of any number of files, least
// recently used first out, within a budget in bytes. It is safe for concurrent use; concurrent
// misses of one block read it once.
type Cache struct {
	mu     sync.Mutex
	budget int64
	used   int64
	ll     *list.List
	items  map[blockKey]*list.Element
	group  singleflight.Group

	hits, misses atomic.Uint64
}

type cached struct {
	key  blockKey
	data []float32
}

// NewCache returns a cache holding at most budget bytes of decoded blocks (a budget below one
// block keeps nothing).
func NewCache(budget int64) *Cache {
	return &Cache{budget: budget, ll: list.New(), items: map[blockKey]*list.Element{}}
}

// CacheStats describes a cache's use.
type CacheStats struct {
	UsedBytes, BudgetBytes int64
	Blocks                 int
	Hits, Misses           uint64
}

// Stats reports the bytes held, the budget, the number of blocks and the hits and misses so far.
func (c *Cache) Stats() CacheStats {
	c.mu.Lock()
	defer c.mu.Unlock()
	return CacheStats{UsedBytes: c.used, BudgetBytes: c.budget, Blocks: c.ll.Len(), Hits: c.hits.Load(), Misses: c.misses.Load()}
}

func (c *Cache) get(k blockKey) ([]float32, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if e, ok := c.items[k]; ok {
		c.ll.MoveToFront(e)
		return e.Value.(*cached).data, true
	}
	return nil, false
}

func (c *Cache) put(k blockKey, data []float32) {
	size := int64(len(data)) * 4
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.items[k]; ok || size > c.budget {
		return
	}
	c.items[k] = c.ll.PushFront(&cached{k, data})
	c.used += size
	for c.used > c.budget {
		e := c.ll.Back()
		ce := e.Value.(*cached)
		c.ll.Remove(e)
		delete(c.items, ce.key)
		c.used -= int64(len(ce.data)) * 4
	}
}

// drop forgets every block of file.
func (c *Cache) drop(file string) {
	c.mu.Lock()
	defer c.mu.Unlock()
	for k, e := range c.items {
		if k.file == file {
			c.ll.Remove(e)
			delete(c.items, k)
			c.used -= int64(len(e.Value.(*cached).data)) * 4
		}
	}
}

// load returns block k, reading it with read on a miss. keep=false (a scan over more data than
// the cache holds) uses a cached block but does not store a newly read one, so a scan does not
// push out the blocks other questions keep using.
func (c *Cache) load(k blockKey, keep bool, read func() ([]float32, error)) ([]float32, error) {
	if d, ok := c.get(k); ok {
		c.hits.Add(1)
		return d, nil
	}
	c.misses.Add(1)
	if !keep {
		return read()
	}
	v, err, _ := c.group.Do(string(encodeKey(k)), func() (any, error) {
		if d, ok := c.get(k); ok {
			return d, nil
		}
		d, err := read()
		if err != nil {
			return nil, err
		}
		c.put(k, d)
		return d, nil
	})
	if err != nil {
		return nil, err
	}
	return v.([]float32), nil
}

func encodeKey(k blockKey) []byte {
	b := make([]byte, 0, len(k.file)+24)
	b = append(b, k.file...)
	for _, v := range []int{k.level, k.bx, k.by} {
		b = append(b, '|', byte(v>>24), byte(v>>16), byte(v>>8), byte(v))
	}
	return b
}
