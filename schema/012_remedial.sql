-- 012: what became of each observation that requires work. In England a private landlord must
-- have the further investigative or remedial work a report requires carried out within 28
-- days, or the shorter period the report gives, starting with the date of the inspection and
-- testing (The Electrical Safety Standards in the Private Rented Sector (England) Regulations
-- 2020, regulation 3(4)). An observation coded C1, C2 or FI as recorded is open until an event
-- here says otherwise. Events are dated and kept, never overwritten: "made safe" and then
-- "remedied" are two rows. The status is worked out from them (model::remedial).
CREATE TABLE remedial_event (
    id             INTEGER PRIMARY KEY,
    -- Removed with its observation (a pending visit abandoned), like the observation with
    -- its visit.
    observation_id INTEGER NOT NULL REFERENCES observation(id) ON DELETE CASCADE,
    -- period_given: the report gives a period shorter than 28 days (period_days);
    -- made_safe, remedied, not_applicable: what was done on `date`, by whom, and what (for
    -- not_applicable, why).
    kind           TEXT NOT NULL CHECK (kind = 'period_given' OR kind = 'made_safe'
                                        OR kind = 'remedied' OR kind = 'not_applicable'),
    date           TEXT CHECK (date IS NULL OR date(date) = date),
    by_whom        TEXT CHECK (by_whom IS NULL OR length(trim(by_whom)) > 0),
    what           TEXT CHECK (what IS NULL OR length(trim(what)) > 0),
    period_days    INTEGER CHECK (period_days BETWEEN 1 AND 27),
    CHECK ((kind = 'period_given') = (period_days IS NOT NULL)),
    CHECK (kind = 'period_given'
           OR (date IS NOT NULL AND by_whom IS NOT NULL AND what IS NOT NULL))
) STRICT;
CREATE INDEX remedial_event_observation ON remedial_event(observation_id);
