// Package migrations embeds the database schema as plain SQL files, one set per dialect
// (postgres/ for PostGIS, sqlite/ for the embedded store), applied in version order by goose.
package migrations
