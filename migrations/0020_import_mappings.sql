-- The spreadsheet import remembers, per file header, which column held which field, the units
-- chosen and the date order, for the next file with the same header. Written only by an import
-- that commits. Not a shop record (no audit triggers): the records an import makes are audited.
CREATE TABLE import_mappings (
    -- the header's cells as a JSON array of trimmed texts
    header      TEXT PRIMARY KEY,
    -- `import::Mapping` as JSON
    mapping     TEXT NOT NULL,
    updated_at  TEXT NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
