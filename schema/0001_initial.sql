-- shardlog schema 1: the record (design.md section 3).
-- Portable SQL apart from the STRICT table option (SQLite). Keys are UUIDv7 text.
-- Times are RFC 3339 UTC text with milliseconds; dates are YYYY-MM-DD text.
-- Quantities are SI REAL; typed measurements also keep their text and unit.

CREATE TABLE meta (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
) STRICT;

-- Lookup lists as data: origin types, cause categories, temper classes, materials, ...
CREATE TABLE lookup (
    kind       TEXT NOT NULL,
    code       TEXT NOT NULL,
    label      TEXT NOT NULL,
    sort_order INTEGER NOT NULL,
    note       TEXT NOT NULL DEFAULT '',
    PRIMARY KEY (kind, code)
) STRICT;

CREATE TABLE sites (
    id     TEXT PRIMARY KEY,
    code   TEXT NOT NULL UNIQUE,
    name   TEXT NOT NULL,
    region TEXT NOT NULL DEFAULT ''
) STRICT;

CREATE TABLE assets (
    id         TEXT PRIMARY KEY,
    code       TEXT NOT NULL UNIQUE,
    asset_type TEXT NOT NULL,
    name       TEXT NOT NULL,
    site_id    TEXT REFERENCES sites (id)
) STRICT;

CREATE TABLE suppliers (
    id   TEXT PRIMARY KEY,
    code TEXT NOT NULL UNIQUE,
    name TEXT NOT NULL
) STRICT;

CREATE TABLE products (
    id          TEXT PRIMARY KEY,
    supplier_id TEXT NOT NULL REFERENCES suppliers (id),
    code        TEXT NOT NULL,
    name        TEXT NOT NULL,
    UNIQUE (supplier_id, code)
) STRICT;

CREATE TABLE lots (
    id         TEXT PRIMARY KEY,
    product_id TEXT NOT NULL REFERENCES products (id),
    code       TEXT NOT NULL,
    made_on    TEXT,
    UNIQUE (product_id, code)
) STRICT;

-- Panes in service, for incidents per 1,000 pane-years.
CREATE TABLE exposure (
    id           TEXT PRIMARY KEY,
    supplier_id  TEXT NOT NULL REFERENCES suppliers (id),
    product_id   TEXT REFERENCES products (id),
    lot_id       TEXT REFERENCES lots (id),
    site_id      TEXT REFERENCES sites (id),
    installed_on TEXT NOT NULL,
    removed_on   TEXT,
    panes        INTEGER NOT NULL CHECK (panes >= 0)
) STRICT;

-- One broken part. seq is the stable row number (text search and keyset paging use it).
CREATE TABLE incidents (
    seq                  INTEGER PRIMARY KEY,
    id                   TEXT NOT NULL UNIQUE,
    reference            TEXT NOT NULL UNIQUE,
    revision             INTEGER NOT NULL CHECK (revision >= 1),
    created_at           TEXT NOT NULL,
    updated_at           TEXT NOT NULL,
    asset_id             TEXT REFERENCES assets (id),
    position             TEXT NOT NULL,
    site_id              TEXT REFERENCES sites (id),
    found_on             TEXT NOT NULL,
    broken_on            TEXT,
    temperature_c        REAL,
    sun                  TEXT NOT NULL,
    weather              TEXT NOT NULL,
    reporter             TEXT NOT NULL,
    how_found            TEXT NOT NULL,
    supplier_id          TEXT REFERENCES suppliers (id),
    product_id           TEXT REFERENCES products (id),
    lot_id               TEXT REFERENCES lots (id),
    makeup               TEXT NOT NULL,
    width_m              REAL,
    height_m             REAL,
    crack_count          INTEGER,
    branching            INTEGER,
    fragment_count       INTEGER,
    origin_location      TEXT,
    tension_face         TEXT NOT NULL,
    cause_category       TEXT,
    cause_factors        TEXT,
    cause_confidence     TEXT,
    cause_responsibility TEXT,
    cause_note           TEXT,
    status               TEXT NOT NULL,
    description          TEXT NOT NULL,
    notes                TEXT NOT NULL,
    -- derived from the current examination result, kept for the log and statistics
    stress_pa            REAL,
    applied_stress_pa    REAL,
    origin_type          TEXT,
    temper               TEXT
) STRICT;

CREATE TABLE plies (
    incident_id TEXT NOT NULL REFERENCES incidents (id) ON DELETE CASCADE,
    ply_no      INTEGER NOT NULL,
    material    TEXT,
    temper      TEXT,
    thickness_m REAL,
    coating     TEXT NOT NULL,
    edge_finish TEXT NOT NULL,
    PRIMARY KEY (incident_id, ply_no)
) STRICT;

CREATE TABLE examinations (
    id              TEXT PRIMARY KEY,
    incident_id     TEXT NOT NULL REFERENCES incidents (id) ON DELETE CASCADE,
    exam_no         INTEGER NOT NULL,
    examined_on     TEXT,
    analyst         TEXT NOT NULL,
    origin_type     TEXT,
    material        TEXT,
    flaw_present    INTEGER NOT NULL,
    flaw_depth_text TEXT,
    flaw_depth_unit TEXT,
    flaw_depth_m    REAL,
    flaw_width_text TEXT,
    flaw_width_unit TEXT,
    flaw_width_m    REAL,
    flaw_shape      TEXT NOT NULL,
    notes           TEXT NOT NULL,
    UNIQUE (incident_id, exam_no)
) STRICT;

-- Raw mirror readings: the number and unit as typed, the SI value, how it was read.
CREATE TABLE mirror_readings (
    examination_id TEXT NOT NULL REFERENCES examinations (id) ON DELETE CASCADE,
    reading_no     INTEGER NOT NULL,
    boundary       TEXT NOT NULL,
    value_text     TEXT NOT NULL,
    unit           TEXT NOT NULL,
    value_m        REAL NOT NULL,
    magnification  REAL,
    analyst        TEXT NOT NULL,
    note           TEXT NOT NULL,
    PRIMARY KEY (examination_id, reading_no)
) STRICT;

-- The computed result of an examination, with the constants and code version.
CREATE TABLE results (
    examination_id    TEXT PRIMARY KEY REFERENCES examinations (id) ON DELETE CASCADE,
    computed_at       TEXT NOT NULL,
    code_version      TEXT NOT NULL,
    stress_pa         REAL,
    stress_low_pa     REAL,
    stress_high_pa    REAL,
    residual_pa       REAL,
    applied_stress_pa REAL,
    flaw_size_m       REAL,
    constants_json    TEXT NOT NULL,
    analysis_json     TEXT NOT NULL
) STRICT;

CREATE TABLE custody (
    id          TEXT PRIMARY KEY,
    incident_id TEXT NOT NULL REFERENCES incidents (id) ON DELETE CASCADE,
    entry_no    INTEGER NOT NULL,
    at          TEXT NOT NULL,
    action      TEXT NOT NULL,
    who         TEXT NOT NULL,
    location    TEXT NOT NULL,
    note        TEXT NOT NULL,
    UNIQUE (incident_id, entry_no)
) STRICT;

-- Files live in <database>.files/<sha256>; never an outside path.
CREATE TABLE attachments (
    id          TEXT PRIMARY KEY,
    incident_id TEXT NOT NULL REFERENCES incidents (id) ON DELETE CASCADE,
    entry_no    INTEGER NOT NULL,
    sha256      TEXT NOT NULL,
    file_name   TEXT NOT NULL,
    media_type  TEXT NOT NULL,
    size_bytes  INTEGER NOT NULL,
    caption     TEXT NOT NULL,
    added_at    TEXT NOT NULL,
    UNIQUE (incident_id, entry_no)
) STRICT;

-- The hash-chained history. hash = SHA-256(prev_hash || canonical row), see DEVELOPERS.md.
CREATE TABLE audit (
    seq       INTEGER PRIMARY KEY,
    at        TEXT NOT NULL,
    actor     TEXT NOT NULL,
    entity    TEXT NOT NULL,
    entity_id TEXT NOT NULL,
    op        TEXT NOT NULL CHECK (op IN ('insert', 'update', 'delete')),
    before    TEXT,
    after     TEXT,
    prev_hash TEXT NOT NULL,
    hash      TEXT NOT NULL
) STRICT;

CREATE INDEX audit_entity ON audit (entity, entity_id, seq);
CREATE INDEX incidents_found ON incidents (found_on, seq);
CREATE INDEX incidents_status ON incidents (status, found_on, seq);
CREATE INDEX incidents_cause ON incidents (cause_category, found_on, seq);
CREATE INDEX incidents_supplier ON incidents (supplier_id, found_on, seq);
CREATE INDEX incidents_lot ON incidents (lot_id, found_on, seq);
CREATE INDEX incidents_site ON incidents (site_id, found_on, seq);
CREATE INDEX incidents_stress ON incidents (stress_pa, seq);
CREATE INDEX examinations_incident ON examinations (incident_id);
CREATE INDEX custody_incident ON custody (incident_id);
CREATE INDEX attachments_incident ON attachments (incident_id);
CREATE INDEX attachments_hash ON attachments (sha256);

INSERT INTO lookup (kind, code, label, sort_order) VALUES
    ('origin_type', 'surface_scratch', 'surface scratch', 10),
    ('origin_type', 'edge_chip', 'edge chip or shell', 20),
    ('origin_type', 'edge_cutting_damage', 'edge damage from cutting or grinding', 30),
    ('origin_type', 'impact_site', 'impact site (Hertzian cone or crushing)', 40),
    ('origin_type', 'hard_contact', 'hard contact with frame or fixing', 50),
    ('origin_type', 'inclusion_nis', 'inclusion: nickel sulfide stone', 60),
    ('origin_type', 'inclusion_refractory', 'inclusion: refractory stone', 70),
    ('origin_type', 'inclusion_bubble', 'inclusion: bubble', 80),
    ('origin_type', 'weathering', 'weathering or pitting', 90),
    ('origin_type', 'hole_notch', 'drilled hole or notch', 100),
    ('origin_type', 'interior_core', 'interior origin in the tensile core', 110),
    ('origin_type', 'unknown', 'unknown', 120),
    ('origin_location', 'edge', 'edge', 10),
    ('origin_location', 'surface', 'surface', 20),
    ('origin_location', 'corner', 'corner', 30),
    ('origin_location', 'interior', 'interior', 40),
    ('cause_category', 'thermal', 'thermal stress', 10),
    ('cause_category', 'impact', 'impact', 20),
    ('cause_category', 'vandalism', 'vandalism', 30),
    ('cause_category', 'hard_contact', 'installed against a hard point', 40),
    ('cause_category', 'edge_damage', 'edge damage from processing', 50),
    ('cause_category', 'nickel_sulfide', 'nickel sulfide inclusion', 60),
    ('cause_category', 'other_inclusion', 'other inclusion', 70),
    ('cause_category', 'pressure', 'wind or pressure overload', 80),
    ('cause_category', 'handling', 'handling or installation damage', 90),
    ('cause_category', 'unknown', 'undetermined', 100),
    ('temper_class', 'annealed', 'annealed', 10),
    ('temper_class', 'heat_strengthened', 'heat-strengthened', 20),
    ('temper_class', 'fully_tempered', 'fully tempered', 30),
    ('temper_class', 'chemically_strengthened', 'chemically strengthened', 40),
    ('material', 'soda_lime', 'soda-lime silicate glass', 10),
    ('material', 'borosilicate', 'borosilicate glass', 20),
    ('material', 'aluminosilicate', 'aluminosilicate glass', 30),
    ('material', 'fused_silica', 'fused silica', 40),
    ('material', 'glass_ceramic', 'glass-ceramic', 50),
    ('material', 'alumina', 'alumina ceramic', 60),
    ('status', 'reported', 'reported', 10),
    ('status', 'received', 'specimen received', 20),
    ('status', 'examining', 'under examination', 30),
    ('status', 'cause_assigned', 'cause assigned', 40),
    ('status', 'claim_open', 'claim open', 50),
    ('status', 'closed', 'closed', 60),
    ('confidence', 'confirmed', 'confirmed', 10),
    ('confidence', 'probable', 'probable', 20),
    ('confidence', 'possible', 'possible', 30),
    ('responsibility', 'supplier', 'supplier', 10),
    ('responsibility', 'installer', 'installer', 20),
    ('responsibility', 'operator', 'operator', 30),
    ('responsibility', 'third_party', 'third party', 40),
    ('responsibility', 'undetermined', 'undetermined', 50),
    ('custody_action', 'received', 'received', 10),
    ('custody_action', 'stored', 'stored', 20),
    ('custody_action', 'sent', 'sent', 30),
    ('custody_action', 'returned', 'returned', 40),
    ('custody_action', 'disposed', 'disposed', 50),
    ('boundary', 'mirror_mist', 'mirror-mist', 10),
    ('boundary', 'mist_hackle', 'mist-hackle', 20),
    ('boundary', 'branching', 'crack branching', 30),
    ('asset_type', 'rail_car', 'rail car', 10),
    ('asset_type', 'bus', 'bus', 20),
    ('asset_type', 'building', 'building', 30),
    ('asset_type', 'machine', 'machine', 40),
    ('asset_type', 'other', 'other', 50),
    ('makeup', 'monolithic', 'monolithic', 10),
    ('makeup', 'laminated', 'laminated', 20),
    ('makeup', 'insulating', 'insulating unit', 30);
