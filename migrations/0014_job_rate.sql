-- How many spectra a running job has analysed and for how long it has
-- been working (µs), so that its page shows its rate (spectra per second).
ALTER TABLE jobs ADD COLUMN spectra INTEGER NOT NULL DEFAULT 0;
ALTER TABLE jobs ADD COLUMN elapsed_us INTEGER NOT NULL DEFAULT 0;
