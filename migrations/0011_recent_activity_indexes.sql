-- Indexes for the counter's recent-activity feed, which takes the newest records of every kind.
-- Without them it read every setup, bench test, cover height and pass ever recorded and sorted
-- them on each request (a million measurements: the counter took seconds). With them each kind
-- is read newest first through its index, joined to its live customer by primary key, and the
-- read stops after the feed's length; `db::activity::recent` is written for that plan and the
-- integration test `plans.rs` checks it with EXPLAIN QUERY PLAN.
CREATE INDEX setup_changes_recent ON setup_changes (changed_on, created_at);
CREATE INDEX bench_tests_recent ON bench_tests (tested_on, created_at);
CREATE INDEX cover_heights_recent ON cover_heights (measured_on, created_at);
CREATE INDEX passes_recent ON passes (run_on, created_at);
CREATE INDEX builds_recent ON builds (created_at);
