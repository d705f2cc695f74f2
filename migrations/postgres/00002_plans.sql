-- Survey plans on PostgreSQL with PostGIS.
-- lines holds every line of a plan, in order, as one MultiLineString in EPSG:4326 (lon/lat as
-- given, not wrapped), indexed so that plans can be found by place. line_names is jsonb (one
-- {"name", "waypoint_names"} object per line); settings is json, not jsonb, so that the
-- caller's text round-trips unchanged.

-- +goose Up
CREATE TABLE plans (
    id          text PRIMARY KEY,
    name        text NOT NULL,
    description text NOT NULL DEFAULT '',
    lines       geometry(MultiLineString, 4326) NOT NULL,
    line_names  jsonb NOT NULL CHECK (jsonb_typeof(line_names) = 'array'),
    settings    json NOT NULL,
    created_at  timestamptz NOT NULL,
    updated_at  timestamptz NOT NULL,
    version     bigint NOT NULL CHECK (version >= 1)
);
CREATE INDEX plans_lines_gist ON plans USING gist (lines);
CREATE INDEX plans_created_id ON plans (created_at, id);

-- +goose Down
DROP TABLE plans;
