-- A disc replacement starts a new wear baseline without erasing the old history: the first
-- measurement with the new disc (full shim stack back in) is marked `new_disc`. Wear figures
-- use the measurements from the latest such mark on; earlier ones stay as history.
ALTER TABLE cover_heights ADD COLUMN new_disc INTEGER NOT NULL DEFAULT 0 CHECK (new_disc IN (0, 1));
