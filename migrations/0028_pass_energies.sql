-- The slip energy of each pass without a data log, by the launch preview at the setting of its
-- date (`model::energy::PassEnergies`): the forecast by slip energy on the build page and the
-- plate-temperature study on the tuning page read it for every such pass, one launch
-- simulation each, on every view. Kept here like the whole-launch fits (0025): derived, written
-- by `status::work_out` in the writing transaction, read with the build's dossier, and used only
-- while `inputs` matches the fingerprint of the preview's request today (else worked out
-- again). The builds that have such passes (launch fields on their car) were marked stale by
-- 0027, so the server keeps theirs at its next start.
CREATE TABLE pass_energies (
    pass_id     INTEGER PRIMARY KEY REFERENCES passes (id) ON DELETE CASCADE,
    inputs      INTEGER NOT NULL,
    -- the slip energy of the preview, J, or NULL with `note`
    energy_j    REAL,
    -- why the preview gives none (no setup in force, it does not lock up), in words
    note        TEXT
);
