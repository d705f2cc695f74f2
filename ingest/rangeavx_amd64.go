package ingest

import "golang.org/x/sys/cpu"

// haveRangeAVX: rangeAVX may run (the processor and the system support AVX).
var haveRangeAVX = cpu.X86.HasAVX

// rangeAVX is prepareRangeGeneric with factor 1 over a multiple of 8 values, with AVX (see the
// assembly): the least and greatest values that are not NaN, every NaN replaced by nan.
//
//go:noescape
func rangeAVX(blk []float32, nan float32) (lo, hi float32)
