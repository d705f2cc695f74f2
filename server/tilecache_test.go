package server

import (
	"bytes"
	"fmt"
	"strconv"
	"strings"
	"testing"
)

// renderedTiles reads the counter of tiles rendered (cache misses) from /metrics (the
// Prometheus text exposition format).
func renderedTiles(t *testing.T, e *env) float64 {
	t.Helper()
	r := e.get("/metrics")
	e.want(r, 200)
	for _, l := range strings.Split(string(r.Body), "\n") {
		if v, ok := strings.CutPrefix(l, "ridgeflank_tiles_rendered_total "); ok {
			f, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
			if err != nil {
				t.Fatal(err)
			}
			return f
		}
	}
	t.Fatal("no ridgeflank_tiles_rendered_total in /metrics")
	return 0
}

// A tile asked again is answered from the tile cache (not rendered again) with the bytes
// rendering gives: those of a server keeping no tiles. Another range is another tile (another
// ETag), rendered and kept apart.
func TestTileCacheAnswersTheRenderedBytes(t *testing.T) {
	cached := newEnv(t, "sqlite", Config{})
	plain := newEnv(t, "sqlite", Config{TileCacheBytes: -1})
	z, x, y, _, _ := swellTile()
	path := func(e *env) string {
		return fmt.Sprintf("/tiles/%s/residual_depth/%d/%d/%d.png", e.dataset, z, x, y)
	}
	first := cached.get(path(cached))
	cached.want(first, 200)
	n := renderedTiles(t, cached)
	again := cached.get(path(cached))
	cached.want(again, 200)
	if got := renderedTiles(t, cached); got != n {
		t.Errorf("the same tile was rendered again (%g tiles rendered, then %g)", n, got)
	}
	ref := plain.get(path(plain))
	plain.want(ref, 200)
	if !bytes.Equal(first.Body, again.Body) || !bytes.Equal(first.Body, ref.Body) {
		t.Errorf("cached tile of %d bytes, first answer %d, rendered without a cache %d: not the same bytes", len(again.Body), len(first.Body), len(ref.Body))
	}
	for _, h := range []string{"ETag", "Content-Type", "Ridgeflank-Colour-Scale", "Cache-Control"} {
		if again.Header.Get(h) != ref.Header.Get(h) {
			t.Errorf("header %s: cached %q, rendered %q", h, again.Header.Get(h), ref.Header.Get(h))
		}
	}
	ranged := cached.get(path(cached) + "?range=-200,200")
	cached.want(ranged, 200)
	if got := renderedTiles(t, cached); got != n+1 {
		t.Errorf("a tile with another range was not rendered (%g tiles rendered, want %g)", got, n+1)
	}
	if bytes.Equal(ranged.Body, first.Body) {
		t.Errorf("the tile with range −200,200 was answered with the default range's bytes")
	}
}

// The cache keeps within its budget, least recently used out first.
func TestTileCacheBudget(t *testing.T) {
	c := newTileCache(8 * 1000) // tiles of 1000 bytes (and 2-byte tags): seven fit
	tile := func(i int) []byte { return bytes.Repeat([]byte{byte(i)}, 1000) }
	for i := range 7 {
		c.put(fmt.Sprint("t", i), tile(i))
	}
	if _, ok := c.get("t0"); !ok { // t0 now most recently used
		t.Fatal("t0 not kept")
	}
	c.put("t7", tile(7)) // over the budget: t1, the least recently used, goes
	if _, ok := c.get("t1"); ok {
		t.Error("t1 kept beyond the budget")
	}
	for _, k := range []string{"t0", "t2", "t7"} {
		if b, ok := c.get(k); !ok || b[0] != byte(k[1]-'0') {
			t.Errorf("%s: kept %v, first byte %v", k, ok, b)
		}
	}
	if c.used > c.budget {
		t.Errorf("%d bytes kept, budget %d", c.used, c.budget)
	}
	c.put("big", make([]byte, 1001)) // over an eighth of the budget: not kept
	if _, ok := c.get("big"); ok {
		t.Error("a tile over an eighth of the budget was kept")
	}
	none := newTileCache(-1)
	none.put("x", tile(1))
	if _, ok := none.get("x"); ok {
		t.Error("a disabled cache kept a tile")
	}
}
