-- 001: the asset register and the readings of every visit.
-- Migrations are append-only: never edit this file after release, add 002_... instead.
-- Every table is STRICT so a wrong type is refused at the door rather than stored.

-- A landlord or managing agent. Properties may exist before their client is known.
CREATE TABLE client (
    id      INTEGER PRIMARY KEY,
    name    TEXT NOT NULL UNIQUE CHECK (length(trim(name)) > 0),
    contact TEXT
) STRICT;

-- A rented home, known by the contractor's own reference (what is written on the job sheet).
CREATE TABLE property (
    id              INTEGER PRIMARY KEY,
    ref             TEXT NOT NULL UNIQUE CHECK (length(trim(ref)) > 0),
    address         TEXT,
    client_id       INTEGER REFERENCES client(id),
    -- Five years is the longest interval allowed for private rented homes in England.
    interval_months INTEGER NOT NULL DEFAULT 60 CHECK (interval_months BETWEEN 1 AND 120),
    notes           TEXT
) STRICT;

-- A consumer unit or distribution board. fed_from_board_id is NULL when fed from the origin.
-- A replaced board is retired, not deleted, so the readings taken on it keep their meaning.
CREATE TABLE board (
    id                INTEGER PRIMARY KEY,
    property_id       INTEGER NOT NULL REFERENCES property(id),
    designation       TEXT NOT NULL CHECK (length(trim(designation)) > 0),
    location          TEXT,
    fed_from_board_id INTEGER REFERENCES board(id),
    earthing          TEXT CHECK (earthing IN ('TN-S', 'TN-C-S', 'TT')),
    status            TEXT NOT NULL DEFAULT 'in_service' CHECK (status IN ('in_service', 'retired')),
    UNIQUE (property_id, designation)
) STRICT;

-- A circuit. The device is kept as its parts so that limits can be looked up without
-- parsing text; replaces_circuit_id carries a circuit's history across a board change or a
-- renumbering (the lineage).
CREATE TABLE circuit (
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
    rcd_type            TEXT CHECK (rcd_type IN ('AC', 'A', 'F', 'B', 'S')),
    insulation          TEXT CHECK (insulation IN ('thermoplastic70', 'thermosetting90')),
    disconnect_s        REAL CHECK (disconnect_s > 0),
    status              TEXT NOT NULL DEFAULT 'in_service' CHECK (status IN ('in_service', 'retired')),
    replaces_circuit_id INTEGER REFERENCES circuit(id)
) STRICT;

-- Only one circuit in service may carry a number on a board; retired ones keep theirs.
CREATE UNIQUE INDEX circuit_number_in_service ON circuit(board_id, number) WHERE status = 'in_service';
CREATE INDEX circuit_replaces ON circuit(replaces_circuit_id);

CREATE TABLE instrument (
    id              INTEGER PRIMARY KEY,
    serial          TEXT NOT NULL UNIQUE CHECK (length(trim(serial)) > 0),
    description     TEXT,
    calibration_due TEXT CHECK (calibration_due IS NULL OR date(calibration_due) = calibration_due)
) STRICT;

-- One inspection and test visit. A pending visit is readings being taken on site; it joins
-- the history only when complete.
CREATE TABLE visit (
    id            INTEGER PRIMARY KEY,
    property_id   INTEGER NOT NULL REFERENCES property(id),
    date          TEXT NOT NULL CHECK (date(date) = date),
    inspector     TEXT,
    instrument_id INTEGER REFERENCES instrument(id),
    ambient_c     REAL CHECK (ambient_c BETWEEN -40 AND 60),
    ze_ohm        REAL CHECK (ze_ohm >= 0),
    pfc_ka        REAL CHECK (pfc_ka >= 0),
    state         TEXT NOT NULL DEFAULT 'complete' CHECK (state IN ('pending', 'complete')),
    UNIQUE (property_id, date)
) STRICT;

-- Ze (or Zdb for a sub-board) and prospective fault current measured at each board per visit.
CREATE TABLE board_test (
    visit_id INTEGER NOT NULL REFERENCES visit(id) ON DELETE CASCADE,
    board_id INTEGER NOT NULL REFERENCES board(id),
    ze_ohm   REAL CHECK (ze_ohm >= 0),
    pfc_ka   REAL CHECK (pfc_ka >= 0),
    PRIMARY KEY (visit_id, board_id)
) STRICT;

-- One circuit's readings at one visit. Every quantity is nullable: not recorded is not zero.
-- An insulation reading with *_over = 1 was over range: the value is a lower bound only.
CREATE TABLE test_record (
    id          INTEGER PRIMARY KEY,
    visit_id    INTEGER NOT NULL REFERENCES visit(id) ON DELETE CASCADE,
    circuit_id  INTEGER NOT NULL REFERENCES circuit(id),
    r1r2_ohm    REAL CHECK (r1r2_ohm >= 0),
    r2_ohm      REAL CHECK (r2_ohm >= 0),
    r1rn_ohm    REAL CHECK (r1rn_ohm >= 0),
    ring_r1_ohm REAL CHECK (ring_r1_ohm >= 0),
    ring_rn_ohm REAL CHECK (ring_rn_ohm >= 0),
    ring_r2_ohm REAL CHECK (ring_r2_ohm >= 0),
    zs_ohm      REAL CHECK (zs_ohm >= 0),
    ir_ll_mohm  REAL CHECK (ir_ll_mohm >= 0),
    ir_ll_over  INTEGER NOT NULL DEFAULT 0 CHECK (ir_ll_over IN (0, 1)),
    ir_le_mohm  REAL CHECK (ir_le_mohm >= 0),
    ir_le_over  INTEGER NOT NULL DEFAULT 0 CHECK (ir_le_over IN (0, 1)),
    rcd_ms      REAL CHECK (rcd_ms >= 0),
    rcd_5x_ms   REAL CHECK (rcd_5x_ms >= 0),
    -- Comma-separated visit-file column names recorded as LIM (a recorded limitation).
    limitations TEXT NOT NULL DEFAULT '',
    note        TEXT,
    UNIQUE (visit_id, circuit_id)
) STRICT;
CREATE INDEX test_record_circuit ON test_record(circuit_id);

-- A dated event on a circuit. Trend analysis starts a new baseline after those that change
-- the physical path (see model::ChangeKind::resets_baseline).
CREATE TABLE circuit_change (
    id         INTEGER PRIMARY KEY,
    circuit_id INTEGER NOT NULL REFERENCES circuit(id),
    date       TEXT NOT NULL CHECK (date(date) = date),
    visit_id   INTEGER REFERENCES visit(id) ON DELETE CASCADE,
    kind       TEXT NOT NULL CHECK (kind IN ('device_changed', 'cable_replaced', 'terminations_remade',
                   'board_replaced', 'circuit_replaced', 'renumbered', 'register_corrected', 'retired')),
    field      TEXT,
    old_value  TEXT,
    new_value  TEXT,
    note       TEXT
) STRICT;
CREATE INDEX circuit_change_circuit ON circuit_change(circuit_id, date);

-- An observation as the inspector recorded it. The tool never assigns a code itself.
CREATE TABLE observation (
    id         INTEGER PRIMARY KEY,
    visit_id   INTEGER NOT NULL REFERENCES visit(id) ON DELETE CASCADE,
    board_id   INTEGER REFERENCES board(id),
    circuit_id INTEGER REFERENCES circuit(id),
    code       TEXT NOT NULL CHECK (code IN ('C1', 'C2', 'C3', 'FI')),
    text       TEXT NOT NULL
) STRICT;
CREATE INDEX observation_visit ON observation(visit_id);

-- Per-database choices (measured-value rule, noise floor), as text keyed by name.
CREATE TABLE setting (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
) STRICT;
