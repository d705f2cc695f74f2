// Package ingest is the one pipeline that turns a raster file into a stored grid (read, units, vertical sense, value checks, deduplication), used by the command line, the upload job and the demo installer.
package ingest
