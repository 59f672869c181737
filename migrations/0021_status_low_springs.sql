-- A spring's first bench test is judged on its load at the installed height against the set
-- (clutch::capacity::spring_health::TestReview::low): the work-due status keeps how many
-- springs that test found low. Every stored status is worked out again under the new rule.
ALTER TABLE build_status ADD COLUMN low_springs INTEGER NOT NULL DEFAULT 0;
UPDATE build_status SET stale = 1;
