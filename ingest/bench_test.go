package ingest

import (
	"math"
	"testing"
)

// BenchmarkStatsAdd measures the one-pass statistics over a 2160-column row block of 256 rows
// (a 10-arc-minute global grid's width), with a tenth of the cells no-data.
func BenchmarkStatsAdd(b *testing.B) {
	blk := make([]float32, 2160*256)
	for i := range blk {
		blk[i] = float32(i%5000) - 2500
		if i%10 == 0 {
			blk[i] = float32(math.NaN())
		}
	}
	b.SetBytes(int64(4 * len(blk)))
	for b.Loop() {
		var s Stats
		s.Add(blk)
	}
}
