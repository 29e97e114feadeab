-- 013: two additions for files kept by other people's tools.
--
-- A reading with no value was only "not recorded" (NULL). A schedule also says why: N/A (the
-- test does not apply to this circuit) or N/T (it applies and was not done), and a report or
-- a later visit should be able to tell them apart. `marks` lists such readings as
-- comma-separated `column:na` or `column:nt` (visit-file column names), like `limitations`
-- lists LIM; a NULL reading in neither list was not recorded.
ALTER TABLE test_record ADD COLUMN marks TEXT NOT NULL DEFAULT '';

-- A layout maps another source's headers, units, date order and value spellings onto the
-- visit file's columns (`import::layout`). Kept by name so the next file from the same source
-- is one command; the definition is the layout's own TOML text, as `layout show` prints it.
CREATE TABLE layout (
    id         INTEGER PRIMARY KEY,
    name       TEXT NOT NULL UNIQUE COLLATE NOCASE CHECK (length(trim(name)) > 0),
    definition TEXT NOT NULL,
    saved_at   TEXT NOT NULL
) STRICT;
