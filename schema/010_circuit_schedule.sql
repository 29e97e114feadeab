-- 010: the rest of a circuit's line on the schedule of test results. All optional: a value
-- not recorded is NULL, never a default.
--
-- An RCD is a device of its own on its board, known by the identifier the schedule gives it
-- (RCD1). The circuits it protects point at it, so one RCD is one device: its trip times are
-- one series, judged once. Identifiers match without regard to case (rcd1 is RCD1).
CREATE TABLE rcd_device (
    id          INTEGER PRIMARY KEY,
    board_id    INTEGER NOT NULL REFERENCES board(id),
    designation TEXT NOT NULL COLLATE NOCASE CHECK (length(trim(designation)) > 0),
    UNIQUE (board_id, designation)
) STRICT;

-- Register attributes of the circuit; each edit is a dated circuit_change, as for the others.
-- wiring_type: as recorded (a short code or text). ref_method: BS 7671 Appendix 4's reference
-- methods A to G and 100 to 103. points: number of points served. breaking_ka: the
-- protective device's breaking capacity in kA. afdd: 1 when an arc fault detection device
-- protects the circuit, 0 when recorded absent.
ALTER TABLE circuit ADD COLUMN wiring_type TEXT CHECK (length(trim(wiring_type)) > 0);
ALTER TABLE circuit ADD COLUMN ref_method TEXT CHECK (ref_method = 'A' OR ref_method = 'B'
    OR ref_method = 'C' OR ref_method = 'D' OR ref_method = 'E' OR ref_method = 'F'
    OR ref_method = 'G' OR ref_method = '100' OR ref_method = '101' OR ref_method = '102'
    OR ref_method = '103');
ALTER TABLE circuit ADD COLUMN points INTEGER CHECK (points >= 0);
ALTER TABLE circuit ADD COLUMN breaking_ka REAL CHECK (breaking_ka > 0);
ALTER TABLE circuit ADD COLUMN afdd INTEGER CHECK (afdd IN (0, 1));
ALTER TABLE circuit ADD COLUMN rcd_device_id INTEGER REFERENCES rcd_device(id);

-- Readings of a visit that are facts, not measurements: polarity (correct / incorrect), the
-- insulation test voltage (BS 7671 Table 64: 250, 500 or 1000 V d.c.) and whether the RCD
-- operated on its own test button.
ALTER TABLE test_record ADD COLUMN polarity TEXT CHECK (polarity IN ('correct', 'incorrect'));
ALTER TABLE test_record ADD COLUMN ir_test_v INTEGER CHECK (ir_test_v = 250 OR ir_test_v = 500
    OR ir_test_v = 1000);
ALTER TABLE test_record ADD COLUMN rcd_button TEXT CHECK (rcd_button IN ('operates', 'failed'));
