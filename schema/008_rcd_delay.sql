-- 008: an RCD's time delay (general or S) is its own attribute beside its waveform type
-- (AC / A / F / B), so a "type A, S" device can be recorded. A stored rcd_type 'S' was the
-- delay with no waveform recorded: it becomes rcd_delay 'S' and rcd_type NULL. The rcd_type
-- CHECK of 004 is left as it is (changing it needs a rebuild of circuit); the store never
-- writes 'S' there again and reads one as the delay.
ALTER TABLE circuit ADD COLUMN rcd_delay TEXT
    CHECK (rcd_delay = 'general' OR rcd_delay = 'S');

UPDATE circuit SET rcd_delay = 'S', rcd_type = NULL WHERE rcd_type = 'S';
