// Package postgis is the PostgreSQL/PostGIS implementation of store.Store (pgx v5 pool,
// geometry columns in EPSG:4326 with GiST indexes, spatial filters evaluated in the database).
package postgis
