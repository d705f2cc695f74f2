package store

import (
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkb"
)

// Stored geometries come back exactly (WKB carries IEEE 754 doubles, OGC Simple Features
// §8.2) and only as the type asked for.
func TestFromWKB(t *testing.T) {
	ls := orb.LineString{{179.5, -29.3}, {-179.25, -29.1}}
	mp := orb.MultiPolygon{{{{0, 0}, {1, 0}, {1, 1}, {0, 0}}}}
	lsWKB, _ := wkb.Marshal(ls)
	mpWKB, _ := wkb.Marshal(mp)
	if got, err := LineStringFromWKB(lsWKB); err != nil || !orb.Equal(got, ls) {
		t.Errorf("line string: %v, %v", got, err)
	}
	if got, err := MultiPolygonFromWKB(mpWKB); err != nil || !orb.Equal(got, mp) {
		t.Errorf("multipolygon: %v, %v", got, err)
	}
	if _, err := MultiPolygonFromWKB(lsWKB); err == nil || !strings.Contains(err.Error(), "stored LineString, want MultiPolygon") {
		t.Errorf("a line string read as a multipolygon: %v", err)
	}
	if _, err := LineStringFromWKB([]byte{1, 2}); err == nil {
		t.Error("two bytes decoded as a line string")
	}
}
