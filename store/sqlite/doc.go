// Package sqlite is the embedded implementation of store.Store: one SQLite file through the
// pure-Go modernc.org/sqlite driver, an R*Tree for box filtering and exact geometry tests in Go.
package sqlite
