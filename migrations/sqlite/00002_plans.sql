-- Survey plans in the embedded SQLite store.
-- lines is the WKB of a MultiLineString (EPSG:4326, lon/lat degrees as given, one LineString per
-- plan line, in order); line_names is a JSON array with one {"name", "waypoint_names"} object per
-- line; settings is JSON text kept exactly as given.

-- +goose Up
CREATE TABLE plans (
    id          TEXT PRIMARY KEY,
    name        TEXT NOT NULL,
    description TEXT NOT NULL DEFAULT '',
    lines       BLOB NOT NULL,
    line_names  TEXT NOT NULL CHECK (json_valid(line_names) AND json_type(line_names) = 'array'),
    settings    TEXT NOT NULL CHECK (json_valid(settings)),
    created_at  INTEGER NOT NULL,
    updated_at  INTEGER NOT NULL,
    version     INTEGER NOT NULL CHECK (version >= 1)
) STRICT;
CREATE INDEX plans_created_id ON plans (created_at, id);

-- +goose Down
DROP TABLE plans;
