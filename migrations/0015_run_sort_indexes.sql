-- Indexes for the run list's sort columns, so that a sorted page of a
-- large log is read in index order and stops at the page instead of
-- sorting every matching run.

CREATE INDEX runs_texc ON runs(texc_k);
CREATE INDEX runs_ne ON runs(ne_m3);
CREATE INDEX runs_title ON runs(title);
