-- Printed setup sheets. A sheet is stored as a snapshot of the inputs it was printed from
-- (JSON), so last season's sheet reprints exactly as it was even after the build changed.
CREATE TABLE sheets (
    id            INTEGER PRIMARY KEY,
    build_id      INTEGER NOT NULL REFERENCES builds (id),
    prepared_by   INTEGER REFERENCES users (id),
    prepared_on   TEXT    NOT NULL,
    inputs        TEXT    NOT NULL,
    created_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX sheets_by_build ON sheets (build_id, id);

-- Read-only links that show one sheet to the customer without a login. Only a hash of the
-- link's secret is stored; a link ends when revoked or at its expiry.
CREATE TABLE sheet_links (
    id            INTEGER PRIMARY KEY,
    sheet_id      INTEGER NOT NULL REFERENCES sheets (id),
    token_hash    TEXT    NOT NULL UNIQUE,
    expires_at    TEXT    NOT NULL,
    revoked_at    TEXT,
    created_by    INTEGER REFERENCES users (id),
    created_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now')),
    updated_at    TEXT    NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%SZ', 'now'))
);
CREATE INDEX sheet_links_by_sheet ON sheet_links (sheet_id);
