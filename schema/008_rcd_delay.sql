-- ohmtrail: foreign_keys off
-- 008: an RCD's time delay (general or S) is its own attribute beside its waveform type
-- (AC / A / F / B), so a "type A, S" device can be recorded. A stored rcd_type 'S' was the
-- delay with no waveform recorded: it becomes rcd_delay 'S' and rcd_type NULL, and rcd_type
-- no longer takes 'S'. SQLite cannot alter a CHECK, so circuit is rebuilt by the procedure of
-- https://www.sqlite.org/lang_altertable.html#otheralter, as in 004, with its indexes as 004
-- and 005 left them.

CREATE TABLE circuit_008 (
    id                  INTEGER PRIMARY KEY,
    board_id            INTEGER NOT NULL REFERENCES board(id),
    number              TEXT NOT NULL CHECK (length(trim(number)) > 0),
    description         TEXT,
    kind                TEXT NOT NULL DEFAULT 'radial' CHECK (kind IN ('ring', 'radial')),
    live_mm2            REAL CHECK (live_mm2 > 0),
    cpc_mm2             REAL CHECK (cpc_mm2 > 0),
    length_m            REAL CHECK (length_m > 0),
    -- Canonical device text as model::Device displays it (B32, RCBO C20, BS 88-3 30A).
    device              TEXT,
    rcd_ma              INTEGER CHECK (rcd_ma > 0),
    -- The waveform type (model::RcdType).
    rcd_type            TEXT CHECK (rcd_type = 'AC' OR rcd_type = 'A' OR rcd_type = 'F'
                                    OR rcd_type = 'B'),
    insulation          TEXT CHECK (insulation IN ('thermoplastic70', 'thermosetting90')),
    disconnect_s        REAL CHECK (disconnect_s > 0),
    status              TEXT NOT NULL DEFAULT 'in_service' CHECK (status IN ('in_service', 'retired')),
    replaces_circuit_id INTEGER REFERENCES circuit(id),
    -- The delay (model::RcdDelay); NULL when not recorded.
    rcd_delay           TEXT CHECK (rcd_delay = 'general' OR rcd_delay = 'S')
) STRICT;
INSERT INTO circuit_008 SELECT id, board_id, number, description, kind, live_mm2, cpc_mm2, length_m,
    device, rcd_ma, CASE WHEN rcd_type = 'S' THEN NULL ELSE rcd_type END, insulation,
    disconnect_s, status, replaces_circuit_id, CASE WHEN rcd_type = 'S' THEN 'S' END
    FROM circuit;
DROP TABLE circuit;
ALTER TABLE circuit_008 RENAME TO circuit;
CREATE UNIQUE INDEX circuit_number_in_service ON circuit(board_id, number) WHERE status = 'in_service';
CREATE INDEX circuit_replaces ON circuit(replaces_circuit_id) WHERE replaces_circuit_id IS NOT NULL;
CREATE INDEX circuit_board ON circuit(board_id);
