//go:build !linux

package gdal

/*
#include "rfgdal.h"
*/
import "C"

import "errors"

// rawTiles reads raw on Linux only (rawread.go); elsewhere GDAL reads every file.
type rawTiles struct{}

var errNoRaw = errors.New("not readable raw")

func newRawTiles(C.GDALDatasetH, int, string) (*rawTiles, error) { return nil, errNoRaw }

func (t *rawTiles) read(int, []float32) error { return errNoRaw }

func (t *rawTiles) close() {}
