-- shardlog schema (pulled exposure): panes in service that other benches of the fleet
-- recorded, as a sync pulls them from the fleet. Kept apart from this bench's own `exposure`:
-- the bench's rates divide its own incidents by its own panes only. Codes are kept as text
-- (the bench may not know another bench's sites or lots), with the bench that recorded the
-- row. Audited (entity 'pulled_exposure', actor 'fleet:pull'); the fleet witnesses those rows
-- and never applies them.

CREATE TABLE pulled_exposure (
    id           TEXT PRIMARY KEY,
    bench        TEXT NOT NULL,
    supplier     TEXT NOT NULL,
    product      TEXT,
    lot          TEXT,
    site         TEXT,
    installed_on TEXT NOT NULL,
    removed_on   TEXT,
    panes        INTEGER NOT NULL CHECK (panes >= 0)
) STRICT;
