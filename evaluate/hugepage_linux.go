package evaluate

import (
	"unsafe"

	"golang.org/x/sys/unix"
)

// blockBuf returns a new buffer of n float32 values. One of 4 MiB or more starts on a 2 MiB
// boundary and is offered transparent huge pages (MADV_HUGEPAGE, madvise(2)) before it is
// first written, so that filling it takes a page fault per 2 MiB rather than per 4 KiB (about
// 5 500 faults less for each 22 MB block buffer, measured on this project's machine). It is
// advice only: without transparent huge pages, or when the kernel refuses, nothing changes.
func blockBuf(n int) []float32 {
	const huge = 2 << 20
	if n*4 < 2*huge {
		return make([]float32, n)
	}
	s := make([]float32, n+huge/4)
	p := uintptr(unsafe.Pointer(unsafe.SliceData(s)))
	skip := int(((p+huge-1)&^(huge-1))-p) / 4
	s = s[skip : skip+n : skip+n]
	b := unsafe.Slice((*byte)(unsafe.Pointer(unsafe.SliceData(s))), n*4)
	_ = unix.Madvise(b[:len(b)&^(huge-1)], unix.MADV_HUGEPAGE)
	return s
}
