-- Sign-off approves one analysis version: runs.approved_version records it
-- (NULL while the run is not signed off). While a run is signed off its
-- summary columns and analysis_version stay those of the approved version,
-- whatever versions are added later, until a reviewer reopens it.
-- status_events.analysis_version is the run's analysis version at each
-- review step (the approved one for a sign-off; NULL for older events).

ALTER TABLE runs ADD COLUMN approved_version INTEGER;

ALTER TABLE status_events ADD COLUMN analysis_version INTEGER;

-- Runs signed off before this migration approved the version they show.
UPDATE runs SET approved_version = analysis_version WHERE status = 'signed_off';
