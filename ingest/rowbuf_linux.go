package ingest

import (
	"unsafe"

	"golang.org/x/sys/unix"
)

// rowBuffer returns n float32 values of anonymous memory mapped outside the Go heap (mmap(2)),
// zeroed, and the function that unmaps them. Large buffers held for a whole run (a row of a
// 15-arc-second grid's tiles is 169 MiB) would otherwise raise the garbage collector's heap
// target by their own size: a Reader's row of tiles in the Go heap added twice its size to the
// peak resident memory of a `grid` run (0.28 → 0.65 GB for one 86400-column input, measured on
// this project's machine). Nothing may use the values after free. Where mapping fails the
// buffer comes from the Go heap.
func rowBuffer(n int) (buf []float32, free func()) {
	if n <= 0 {
		return nil, func() {}
	}
	b, err := unix.Mmap(-1, 0, n*4, unix.PROT_READ|unix.PROT_WRITE, unix.MAP_PRIVATE|unix.MAP_ANON)
	if err != nil {
		return make([]float32, n), func() {}
	}
	return unsafe.Slice((*float32)(unsafe.Pointer(unsafe.SliceData(b))), n), func() { _ = unix.Munmap(b) }
}
