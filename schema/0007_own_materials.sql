-- shardlog schema (own materials): a lab's own materials beside the built-in library. Each
-- row is one material with every constant (value, spread, provenance) as the JSON of the
-- core's Material; `revision` counts its changes (1 when made). Its code is also a `material`
-- lookup entry, so that examinations and plies name it as they name a library material.
-- Every change is audited (entity "material", by id); the audit log keeps every revision.

CREATE TABLE own_materials (
    id       TEXT PRIMARY KEY,
    code     TEXT NOT NULL UNIQUE,
    base     TEXT,
    revision INTEGER NOT NULL CHECK (revision >= 1),
    body     TEXT NOT NULL
) STRICT;
