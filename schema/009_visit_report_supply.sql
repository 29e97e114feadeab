-- 009: the rest of a visit's schedule, as the inspector recorded it. The tool assigns none of
-- these: the report's reference, the overall outcome in the inspector's own words, the
-- recommended interval (the next inspection is due that long after the visit when it was a
-- full inspection), the extent of the installation covered and the agreed limitations.
-- Beside them the supply characteristics and main protective bonding at the origin: the
-- nominal voltage U0, the earth electrode resistance Ra of a TT installation, the main
-- bonding conductors' csa and whether their continuity to water, gas and other services was
-- confirmed ('yes'), not confirmed ('no') or there is no such service ('none').
-- Every column is nullable: not recorded is not zero. ADD COLUMN keeps the rows; its CHECKs
-- hold for them since every new value is NULL.
ALTER TABLE visit ADD COLUMN report_ref TEXT CHECK (report_ref IS NULL OR length(trim(report_ref)) > 0);
ALTER TABLE visit ADD COLUMN outcome TEXT CHECK (outcome IS NULL OR length(trim(outcome)) > 0);
ALTER TABLE visit ADD COLUMN interval_months INTEGER CHECK (interval_months BETWEEN 1 AND 120);
ALTER TABLE visit ADD COLUMN extent TEXT;
ALTER TABLE visit ADD COLUMN agreed_limitations TEXT;
ALTER TABLE visit ADD COLUMN u0_v REAL CHECK (u0_v > 0);
ALTER TABLE visit ADD COLUMN ra_ohm REAL CHECK (ra_ohm >= 0);
ALTER TABLE visit ADD COLUMN bonding_csa_mm2 REAL CHECK (bonding_csa_mm2 > 0);
ALTER TABLE visit ADD COLUMN bonding_water TEXT
    CHECK (bonding_water = 'yes' OR bonding_water = 'no' OR bonding_water = 'none');
ALTER TABLE visit ADD COLUMN bonding_gas TEXT
    CHECK (bonding_gas = 'yes' OR bonding_gas = 'no' OR bonding_gas = 'none');
ALTER TABLE visit ADD COLUMN bonding_other TEXT
    CHECK (bonding_other = 'yes' OR bonding_other = 'no' OR bonding_other = 'none');

-- At a board fed from another: Zdb, the loop impedance measured at the board's incoming
-- terminals, and the R1+R2 of the sub-main feeding it. A sub-board's circuits take Zdb as
-- their Ze when recorded, else the origin's Ze plus the sub-main's R1+R2.
ALTER TABLE board_test ADD COLUMN zdb_ohm REAL CHECK (zdb_ohm >= 0);
ALTER TABLE board_test ADD COLUMN submain_r1r2_ohm REAL CHECK (submain_r1r2_ohm >= 0);
