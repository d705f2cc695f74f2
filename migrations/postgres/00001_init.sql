-- Schema of the ridgeflank catalogue on PostgreSQL with PostGIS.
-- Geometry is stored in EPSG:4326 (longitude, latitude in degrees) without wrapping:
-- a region that crosses the antimeridian is either split at ±180 or uses longitudes beyond 180.

-- +goose Up
CREATE EXTENSION IF NOT EXISTS postgis;

-- One row per catalogue; its id is written into the grid directory so that a directory
-- that belongs to another catalogue is never swept.
CREATE TABLE store_meta (
    key   text PRIMARY KEY,
    value text NOT NULL
);
INSERT INTO store_meta (key, value) VALUES ('catalogue_id', gen_random_uuid()::text);

CREATE TABLE regions (
    id          text PRIMARY KEY,
    name        text NOT NULL,
    description text NOT NULL DEFAULT '',
    tags        text[] NOT NULL DEFAULT '{}',
    geom        geometry(MultiPolygon, 4326) NOT NULL,
    owner       text NOT NULL DEFAULT '',
    created_at  timestamptz NOT NULL,
    updated_at  timestamptz NOT NULL,
    version     bigint NOT NULL CHECK (version >= 1)
);
CREATE INDEX regions_geom_gist ON regions USING gist (geom);
CREATE INDEX regions_tags_gin ON regions USING gin (tags);
CREATE INDEX regions_created_id ON regions (created_at, id);

CREATE TABLE grids (
    id             text PRIMARY KEY,
    name           text NOT NULL,
    kind           text NOT NULL CHECK (kind IN ('age', 'depth', 'elevation', 'sediment_thickness',
                                                 'crustal_thickness', 'age_uncertainty', 'other')),
    units          text NOT NULL DEFAULT '',
    vertical_sense text NOT NULL CHECK (vertical_sense IN ('depth_positive_down', 'elevation_positive_up', 'none')),
    footprint      geometry(MultiPolygon, 4326) NOT NULL,
    resolution_deg double precision NOT NULL CHECK (resolution_deg > 0),
    registration   text NOT NULL CHECK (registration IN ('cell_centre', 'node')),
    provenance     text NOT NULL DEFAULT '',
    licence        text NOT NULL DEFAULT '',
    content_hash   text NOT NULL UNIQUE CHECK (content_hash ~ '^[0-9a-f]{64}$'),
    size_bytes     bigint NOT NULL CHECK (size_bytes >= 0),
    path           text NOT NULL UNIQUE,
    created_at     timestamptz NOT NULL
);
CREATE INDEX grids_footprint_gist ON grids USING gist (footprint);
CREATE INDEX grids_created_id ON grids (created_at, id);

CREATE TABLE datasets (
    id                      text PRIMARY KEY,
    name                    text NOT NULL,
    description             text NOT NULL DEFAULT '',
    age_grid_id             text NOT NULL REFERENCES grids (id) ON DELETE RESTRICT,
    depth_grid_id           text REFERENCES grids (id) ON DELETE RESTRICT,
    sediment_grid_id        text REFERENCES grids (id) ON DELETE RESTRICT,
    crust_grid_id           text REFERENCES grids (id) ON DELETE RESTRICT,
    age_uncertainty_grid_id text REFERENCES grids (id) ON DELETE RESTRICT,
    created_at              timestamptz NOT NULL,
    updated_at              timestamptz NOT NULL,
    version                 bigint NOT NULL CHECK (version >= 1)
);
CREATE INDEX datasets_age_grid ON datasets (age_grid_id);
CREATE INDEX datasets_depth_grid ON datasets (depth_grid_id);
CREATE INDEX datasets_sediment_grid ON datasets (sediment_grid_id);
CREATE INDEX datasets_crust_grid ON datasets (crust_grid_id);
CREATE INDEX datasets_age_uncertainty_grid ON datasets (age_uncertainty_grid_id);
CREATE INDEX datasets_created_id ON datasets (created_at, id);

-- Parameters are kept as json (not jsonb) so that the caller's text round-trips unchanged.
CREATE TABLE tracks (
    id          text PRIMARY KEY,
    name        text NOT NULL,
    description text NOT NULL DEFAULT '',
    waypoints   geometry(LineString, 4326) NOT NULL,
    params      json NOT NULL,
    created_at  timestamptz NOT NULL,
    updated_at  timestamptz NOT NULL,
    version     bigint NOT NULL CHECK (version >= 1)
);
CREATE INDEX tracks_created_id ON tracks (created_at, id);

CREATE TABLE custom_models (
    id          text PRIMARY KEY,
    name        text NOT NULL,
    description text NOT NULL DEFAULT '',
    params      json NOT NULL,
    created_at  timestamptz NOT NULL,
    updated_at  timestamptz NOT NULL,
    version     bigint NOT NULL CHECK (version >= 1)
);
CREATE INDEX custom_models_created_id ON custom_models (created_at, id);

-- API tokens: only the SHA-256 of the secret is kept.
CREATE TABLE api_tokens (
    id           text PRIMARY KEY,
    name         text NOT NULL,
    role         text NOT NULL CHECK (role IN ('reader', 'editor', 'admin')),
    token_sha256 text NOT NULL UNIQUE CHECK (token_sha256 ~ '^[0-9a-f]{64}$'),
    created_at   timestamptz NOT NULL,
    last_used_at timestamptz,
    revoked_at   timestamptz
);
CREATE INDEX api_tokens_created_id ON api_tokens (created_at, id);

-- +goose Down
DROP TABLE api_tokens;
DROP TABLE custom_models;
DROP TABLE tracks;
DROP TABLE datasets;
DROP TABLE grids;
DROP TABLE regions;
DROP TABLE store_meta;
