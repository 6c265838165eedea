-- Flags carry a severity (problem, caution, note). n_warnings now counts the
-- distinct problem and caution codes of an analysis result (notes, the
-- method's general caveats, are not counted), and warn_worst holds the worst
-- of their severities ('problem', 'caution', or '' when there is none), for
-- the run log's colour. Rows stored earlier keep their old count (all codes)
-- and an empty warn_worst until the run is analysed again.

ALTER TABLE analysis_results ADD COLUMN warn_worst TEXT NOT NULL DEFAULT '';

ALTER TABLE runs ADD COLUMN warn_worst TEXT NOT NULL DEFAULT '';
