-- A board's circuits, retired ones included, without scanning every circuit in the portfolio:
-- the unique index on (board_id, number) covers only circuits in service.
CREATE INDEX circuit_board ON circuit(board_id);
