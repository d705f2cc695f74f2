//go:build !linux

package evaluate

// blockBuf returns a new buffer of n float32 values (see hugepage_linux.go).
func blockBuf(n int) []float32 { return make([]float32, n) }
