// Package store defines the persistence contract of ridgeflank (regions, the grid catalogue and
// its grid files, datasets, tracks, survey plans, custom models and API tokens) shared by the PostGIS and the
// embedded SQLite implementations.
package store
