-- 006: mark the file as ohmtrail's own, so that a SQLite file of another program given as
-- --db is recognised and refused untouched instead of having these tables added to it
-- (https://www.sqlite.org/pragma.html#pragma_application_id). 0x6F686D74 is "ohmt" in ASCII;
-- store::APPLICATION_ID holds the same number.
PRAGMA application_id = 1869114740;
