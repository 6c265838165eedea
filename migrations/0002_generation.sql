-- A data generation number, bumped by every change to runs (their summary
-- included) and their tags, so that derived data (trend series) can be
-- cached and known to be current with one cheap read.

CREATE TABLE data_generation (
  id  INTEGER PRIMARY KEY CHECK (id = 1),
  gen INTEGER NOT NULL
) STRICT;

INSERT INTO data_generation (id, gen) VALUES (1, 0);

CREATE TRIGGER runs_gen_insert AFTER INSERT ON runs BEGIN UPDATE data_generation SET gen = gen + 1 WHERE id = 1; END;

CREATE TRIGGER runs_gen_update AFTER UPDATE ON runs BEGIN UPDATE data_generation SET gen = gen + 1 WHERE id = 1; END;

CREATE TRIGGER runs_gen_delete AFTER DELETE ON runs BEGIN UPDATE data_generation SET gen = gen + 1 WHERE id = 1; END;

CREATE TRIGGER run_tags_gen_insert AFTER INSERT ON run_tags BEGIN UPDATE data_generation SET gen = gen + 1 WHERE id = 1; END;

CREATE TRIGGER run_tags_gen_delete AFTER DELETE ON run_tags BEGIN UPDATE data_generation SET gen = gen + 1 WHERE id = 1; END;
