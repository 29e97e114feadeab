-- ohmtrail: foreign_keys off
-- 004: the same constraints, spelled so SQLite checks them in place. A CHECK of the form
-- `x IN (a, b, c)` with more than two constants makes SQLite build a temporary B-tree of the
-- constants every time the statement runs, which cost an import about a tenth of its time (once
-- per circuit inserted). `x = a OR x = b OR x = c` accepts and refuses exactly the same values
-- (NULL passes both ways). SQLite cannot alter a CHECK, so each table is rebuilt by the
-- procedure of https://www.sqlite.org/lang_altertable.html#otheralter (the runner turns foreign
-- keys off around this file and runs PRAGMA foreign_key_check before committing).

CREATE TABLE board_004 (
    id                INTEGER PRIMARY KEY,
    property_id       INTEGER NOT NULL REFERENCES property(id),
    designation       TEXT NOT NULL CHECK (length(trim(designation)) > 0),
    location          TEXT,
    fed_from_board_id INTEGER REFERENCES board(id),
    earthing          TEXT CHECK (earthing = 'TN-S' OR earthing = 'TN-C-S' OR earthing = 'TT'),
    status            TEXT NOT NULL DEFAULT 'in_service' CHECK (status IN ('in_service', 'retired')),
    UNIQUE (property_id, designation)
) STRICT;
INSERT INTO board_004 SELECT id, property_id, designation, location, fed_from_board_id, earthing, status
    FROM board;
DROP TABLE board;
ALTER TABLE board_004 RENAME TO board;

CREATE TABLE circuit_004 (
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
    rcd_type            TEXT CHECK (rcd_type = 'AC' OR rcd_type = 'A' OR rcd_type = 'F'
                                    OR rcd_type = 'B' OR rcd_type = 'S'),
    insulation          TEXT CHECK (insulation IN ('thermoplastic70', 'thermosetting90')),
    disconnect_s        REAL CHECK (disconnect_s > 0),
    status              TEXT NOT NULL DEFAULT 'in_service' CHECK (status IN ('in_service', 'retired')),
    replaces_circuit_id INTEGER REFERENCES circuit(id)
) STRICT;
INSERT INTO circuit_004 SELECT id, board_id, number, description, kind, live_mm2, cpc_mm2, length_m,
    device, rcd_ma, rcd_type, insulation, disconnect_s, status, replaces_circuit_id
    FROM circuit;
DROP TABLE circuit;
ALTER TABLE circuit_004 RENAME TO circuit;
CREATE UNIQUE INDEX circuit_number_in_service ON circuit(board_id, number) WHERE status = 'in_service';
CREATE INDEX circuit_replaces ON circuit(replaces_circuit_id);
CREATE INDEX circuit_board ON circuit(board_id);

CREATE TABLE circuit_change_004 (
    id         INTEGER PRIMARY KEY,
    circuit_id INTEGER NOT NULL REFERENCES circuit(id),
    date       TEXT NOT NULL CHECK (date(date) = date),
    visit_id   INTEGER REFERENCES visit(id) ON DELETE CASCADE,
    kind       TEXT NOT NULL CHECK (kind = 'device_changed' OR kind = 'cable_replaced'
                   OR kind = 'terminations_remade' OR kind = 'board_replaced'
                   OR kind = 'circuit_replaced' OR kind = 'renumbered'
                   OR kind = 'register_corrected' OR kind = 'retired'),
    field      TEXT,
    old_value  TEXT,
    new_value  TEXT,
    note       TEXT
) STRICT;
INSERT INTO circuit_change_004 SELECT id, circuit_id, date, visit_id, kind, field, old_value, new_value, note
    FROM circuit_change;
DROP TABLE circuit_change;
ALTER TABLE circuit_change_004 RENAME TO circuit_change;
CREATE INDEX circuit_change_circuit ON circuit_change(circuit_id, date);

CREATE TABLE observation_004 (
    id         INTEGER PRIMARY KEY,
    visit_id   INTEGER NOT NULL REFERENCES visit(id) ON DELETE CASCADE,
    board_id   INTEGER REFERENCES board(id),
    circuit_id INTEGER REFERENCES circuit(id),
    code       TEXT NOT NULL CHECK (code = 'C1' OR code = 'C2' OR code = 'C3' OR code = 'FI'),
    text       TEXT NOT NULL
) STRICT;
INSERT INTO observation_004 SELECT id, visit_id, board_id, circuit_id, code, text FROM observation;
DROP TABLE observation;
ALTER TABLE observation_004 RENAME TO observation;
CREATE INDEX observation_visit ON observation(visit_id);
