-- 011: stable identifiers, so that a history can move between machines and be merged
-- (`ohmtrail export --archive`, `ohmtrail merge`). The integer ids stay the keys inside one
-- database; a uuid names the same property, board, circuit or visit in every database that
-- holds it. 16-byte random UUIDs (RFC 9562 version 4): the version nibble is 4 and the variant
-- bits are 10. Rows that exist already get one here; every insert path in `store` sets one.
--
-- Test records get none stored: the (visit, circuit) pair is unique, so a record's identifier
-- is derived from its visit's and circuit's (a version 5 UUID, `archive::record_uuid`).
-- Only property and board have an index on their uuid: they are few. Circuits and visits are
-- many and an index on a random key costs every import a B-tree insert per row; a merge reads
-- their identifiers into memory once instead.
ALTER TABLE property ADD COLUMN uuid BLOB CHECK (length(uuid) = 16);
ALTER TABLE board ADD COLUMN uuid BLOB CHECK (length(uuid) = 16);
ALTER TABLE circuit ADD COLUMN uuid BLOB CHECK (length(uuid) = 16);
ALTER TABLE visit ADD COLUMN uuid BLOB CHECK (length(uuid) = 16);

-- Six random bytes, the version byte (0100 and four random bits), one random byte, the
-- variant byte (10 and six random bits), seven random bytes, spelled in hexadecimal and
-- turned into a BLOB by unhex (`||` would make text, which the BLOB column refuses).
UPDATE property SET uuid = unhex(hex(randomblob(6)) || printf('%02X', 64 + abs(random() % 16))
    || hex(randomblob(1)) || printf('%02X', 128 + abs(random() % 64)) || hex(randomblob(7)));
UPDATE board SET uuid = unhex(hex(randomblob(6)) || printf('%02X', 64 + abs(random() % 16))
    || hex(randomblob(1)) || printf('%02X', 128 + abs(random() % 64)) || hex(randomblob(7)));
UPDATE circuit SET uuid = unhex(hex(randomblob(6)) || printf('%02X', 64 + abs(random() % 16))
    || hex(randomblob(1)) || printf('%02X', 128 + abs(random() % 64)) || hex(randomblob(7)));
UPDATE visit SET uuid = unhex(hex(randomblob(6)) || printf('%02X', 64 + abs(random() % 16))
    || hex(randomblob(1)) || printf('%02X', 128 + abs(random() % 64)) || hex(randomblob(7)));

CREATE UNIQUE INDEX property_uuid ON property(uuid);
CREATE UNIQUE INDEX board_uuid ON board(uuid);
