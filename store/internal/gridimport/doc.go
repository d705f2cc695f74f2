// Package gridimport holds the grid import sequence (file first, then catalogue row) shared by
// the store backends.
package gridimport
