-- 003: test records are always reached through their visit (the unique (visit_id, circuit_id)
-- index), never by circuit alone, and circuits are never deleted; the extra index on circuit_id
-- only cost every import one more B-tree insert per record (about a tenth of an import's time).
DROP INDEX IF EXISTS test_record_circuit;
