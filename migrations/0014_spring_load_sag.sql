-- Spring sag is now judged on each spring's load at the installed length (when free lengths were
-- measured) instead of its rate alone, and the figures use those loads. Every kept build status
-- is marked stale so that the server works each one out again at its next start.
UPDATE build_status SET stale = 1, urgent = 1;
