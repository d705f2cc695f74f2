//go:build !amd64

package ingest

const haveRangeAVX = false

func rangeAVX(blk []float32, nan float32) (lo, hi float32) { panic("rangeAVX: amd64 only") }
