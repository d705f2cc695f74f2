// Package gdal is the one cgo package of ridgeflank: it reads and writes lon/lat raster grids
// through the GDAL C API and computes WGS84 geodesics with PROJ's geodesic routines.
package gdal
