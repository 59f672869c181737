-- A stored build's launch previews now integrate at 2 ms (`model::launch::PREVIEW_STEP_MS`)
-- instead of the free calculation's 0.5 ms. The whole-launch fits kept in `pass_launch_fits` carry a
-- fingerprint of their request, step included, so every fit kept before no longer matches and
-- would be worked out again on every page view. The builds that have fits (their car has the
-- launch fields) are marked stale, so the server works them out once at its next start
-- (`status::ensure`).
UPDATE build_status SET stale = 1, urgent = 1
WHERE build_id IN (SELECT build_id FROM launch_ready_builds);
