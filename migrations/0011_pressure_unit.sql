-- The unit a run's pressure was entered in (Pa, mbar or Torr), so that
-- pages show it as entered. pressure_pa stays the pressure in Pa (what the
-- analysis and the trends use); the unit is for display only.
ALTER TABLE runs ADD COLUMN pressure_unit TEXT NOT NULL DEFAULT 'Pa' CHECK (pressure_unit IN ('Pa', 'mbar', 'Torr'));
