-- Sign-in throttling, replacing the log of every failed sign-in (`login_failures`), which grew
-- by a row per failure and was purged by an unindexed scan holding the write lock.
--
-- One row per client address (`client:<address>`) and per name tried (`name:<name in lower
-- case>`): how many failures it has in the current window and when the last one was (Unix
-- milliseconds). A failure is one upsert of two rows, so the table grows with the number of
-- clients and names, never with the number of tries. The server deletes rows whose window has
-- passed, and the oldest rows past a cap, in small batches by `login_throttle_by_age`, in the
-- background rather than in a sign-in.
--
-- Sign-in state, not a shop record: no audit triggers, and not exported.

DROP TABLE login_failures;

CREATE TABLE login_throttle (
    key              TEXT    PRIMARY KEY,
    failures         INTEGER NOT NULL CHECK (failures > 0),
    last_failure_ms  INTEGER NOT NULL
);
CREATE INDEX login_throttle_by_age ON login_throttle (last_failure_ms);
