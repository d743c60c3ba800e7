-- shardlog schema (fleet moves): a specimen sent to another bench of the fleet, and the
-- settling of a fleet conflict by the bench that owns the record. Both are audited records
-- (entities 'transfer' and 'resolution'); the fleet reads them from the pushed chain: a
-- transfer moves the incident's ownership to the receiving bench, a resolution closes the
-- conflict it names when the same push carries the owner's new edit of that incident.

CREATE TABLE transfers (
    id          TEXT PRIMARY KEY,
    incident_id TEXT NOT NULL,
    reference   TEXT NOT NULL,
    from_bench  TEXT NOT NULL,
    to_bench    TEXT NOT NULL,
    at          TEXT NOT NULL,
    by          TEXT NOT NULL,
    note        TEXT NOT NULL DEFAULT ''
) STRICT;
CREATE INDEX transfers_incident ON transfers (incident_id);

CREATE TABLE resolutions (
    id          TEXT PRIMARY KEY,
    conflict    INTEGER NOT NULL,
    incident_id TEXT NOT NULL,
    kept        TEXT NOT NULL CHECK (kept IN ('fleet', 'bench')),
    at          TEXT NOT NULL,
    by          TEXT NOT NULL
) STRICT;
