-- Schema of the ridgeflank catalogue in the embedded SQLite store.
-- Times are INTEGER microseconds since 1970-01-01 UTC; geometry is WKB (EPSG:4326, lon/lat degrees);
-- tags are a JSON array of strings; parameters are JSON text kept exactly as given.

-- +goose Up
CREATE TABLE store_meta (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
) STRICT;
INSERT INTO store_meta (key, value) VALUES ('catalogue_id', lower(hex(randomblob(16))));

CREATE TABLE regions (
    rid         INTEGER PRIMARY KEY,          -- row id shared with regions_rtree
    id          TEXT NOT NULL UNIQUE,
    name        TEXT NOT NULL,
    description TEXT NOT NULL DEFAULT '',
    tags        TEXT NOT NULL DEFAULT '[]' CHECK (json_valid(tags)),
    geom        BLOB NOT NULL,
    owner       TEXT NOT NULL DEFAULT '',
    created_at  INTEGER NOT NULL,
    updated_at  INTEGER NOT NULL,
    version     INTEGER NOT NULL CHECK (version >= 1)
) STRICT;
CREATE INDEX regions_created_id ON regions (created_at, id);

-- Bounding box of each region (planar lon/lat, as stored); a prefilter only, the exact test runs in Go.
CREATE VIRTUAL TABLE regions_rtree USING rtree (rid, min_lon, max_lon, min_lat, max_lat);

CREATE TABLE grids (
    id             TEXT PRIMARY KEY,
    name           TEXT NOT NULL,
    kind           TEXT NOT NULL CHECK (kind IN ('age', 'depth', 'elevation', 'sediment_thickness',
                                                 'crustal_thickness', 'age_uncertainty', 'other')),
    units          TEXT NOT NULL DEFAULT '',
    vertical_sense TEXT NOT NULL CHECK (vertical_sense IN ('depth_positive_down', 'elevation_positive_up', 'none')),
    footprint      BLOB NOT NULL,
    min_lon        REAL NOT NULL,
    max_lon        REAL NOT NULL,
    min_lat        REAL NOT NULL,
    max_lat        REAL NOT NULL,
    resolution_deg REAL NOT NULL CHECK (resolution_deg > 0),
    registration   TEXT NOT NULL CHECK (registration IN ('cell_centre', 'node')),
    provenance     TEXT NOT NULL DEFAULT '',
    licence        TEXT NOT NULL DEFAULT '',
    content_hash   TEXT NOT NULL UNIQUE CHECK (length(content_hash) = 64),
    size_bytes     INTEGER NOT NULL CHECK (size_bytes >= 0),
    path           TEXT NOT NULL UNIQUE,
    created_at     INTEGER NOT NULL
) STRICT;
CREATE INDEX grids_created_id ON grids (created_at, id);

CREATE TABLE datasets (
    id                      TEXT PRIMARY KEY,
    name                    TEXT NOT NULL,
    description             TEXT NOT NULL DEFAULT '',
    age_grid_id             TEXT NOT NULL REFERENCES grids (id) ON DELETE RESTRICT,
    depth_grid_id           TEXT REFERENCES grids (id) ON DELETE RESTRICT,
    sediment_grid_id        TEXT REFERENCES grids (id) ON DELETE RESTRICT,
    crust_grid_id           TEXT REFERENCES grids (id) ON DELETE RESTRICT,
    age_uncertainty_grid_id TEXT REFERENCES grids (id) ON DELETE RESTRICT,
    created_at              INTEGER NOT NULL,
    updated_at              INTEGER NOT NULL,
    version                 INTEGER NOT NULL CHECK (version >= 1)
) STRICT;
CREATE INDEX datasets_age_grid ON datasets (age_grid_id);
CREATE INDEX datasets_depth_grid ON datasets (depth_grid_id);
CREATE INDEX datasets_sediment_grid ON datasets (sediment_grid_id);
CREATE INDEX datasets_crust_grid ON datasets (crust_grid_id);
CREATE INDEX datasets_age_uncertainty_grid ON datasets (age_uncertainty_grid_id);
CREATE INDEX datasets_created_id ON datasets (created_at, id);

CREATE TABLE tracks (
    id          TEXT PRIMARY KEY,
    name        TEXT NOT NULL,
    description TEXT NOT NULL DEFAULT '',
    waypoints   BLOB NOT NULL,
    params      TEXT NOT NULL CHECK (json_valid(params)),
    created_at  INTEGER NOT NULL,
    updated_at  INTEGER NOT NULL,
    version     INTEGER NOT NULL CHECK (version >= 1)
) STRICT;
CREATE INDEX tracks_created_id ON tracks (created_at, id);

CREATE TABLE custom_models (
    id          TEXT PRIMARY KEY,
    name        TEXT NOT NULL,
    description TEXT NOT NULL DEFAULT '',
    params      TEXT NOT NULL CHECK (json_valid(params)),
    created_at  INTEGER NOT NULL,
    updated_at  INTEGER NOT NULL,
    version     INTEGER NOT NULL CHECK (version >= 1)
) STRICT;
CREATE INDEX custom_models_created_id ON custom_models (created_at, id);

CREATE TABLE api_tokens (
    id           TEXT PRIMARY KEY,
    name         TEXT NOT NULL,
    role         TEXT NOT NULL CHECK (role IN ('reader', 'editor', 'admin')),
    token_sha256 TEXT NOT NULL UNIQUE CHECK (length(token_sha256) = 64),
    created_at   INTEGER NOT NULL,
    last_used_at INTEGER,
    revoked_at   INTEGER
) STRICT;
CREATE INDEX api_tokens_created_id ON api_tokens (created_at, id);

-- +goose Down
DROP TABLE api_tokens;
DROP TABLE custom_models;
DROP TABLE tracks;
DROP TABLE datasets;
DROP TABLE grids;
DROP TABLE regions_rtree;
DROP TABLE regions;
DROP TABLE store_meta;
