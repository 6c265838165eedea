-- A spectrum result's plot series (the windows' and the whole fit's
-- wavelength, data, model and residual: most of a result's JSON text) are
-- stored apart in a compact binary form (spectrum.AppendJSONSplit): the
-- result JSON holds the placeholder [null] where each series goes, and
-- spectrum.ExpandSeries puts the stored series back, giving the JSON as it
-- was written before, byte for byte. NULL (every row stored before this
-- migration, line tables, errors, a row kept by same_as): the JSON is
-- whole. Rows are never rewritten: old results read as they were stored.
ALTER TABLE analysis_results ADD COLUMN series BLOB;
