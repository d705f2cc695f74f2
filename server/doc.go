// Package server is ridgeflank's HTTP API: OGC API–EDR queries answered in CoverageJSON and
// other formats, the management API, map tiles, health and metrics, behind one chi router.
package server
