-- shardlog schema (bench practice): heat-soak records per lot, the install date of the broken
-- pane, the viewing mode of each mirror reading, and the fragmentation minimums a lab keeps.

-- Heat-soak test of a lot (EN 14179-1): NULL = not known, 0 = not soaked, 1 = soaked; the
-- date and the certificate reference are optional.
ALTER TABLE lots ADD COLUMN heat_soaked INTEGER CHECK (heat_soaked IN (0, 1));
ALTER TABLE lots ADD COLUMN heat_soak_on TEXT;
ALTER TABLE lots ADD COLUMN heat_soak_ref TEXT NOT NULL DEFAULT '';

-- The day the broken pane was installed (its time in service runs from here).
ALTER TABLE incidents ADD COLUMN installed_on TEXT;

-- How a mirror reading was viewed (a lookup code of kind viewing_mode); NULL = not recorded.
ALTER TABLE mirror_readings ADD COLUMN viewing TEXT;

INSERT INTO lookup (kind, code, label, sort_order) VALUES
    ('viewing_mode', 'reflected', 'reflected light', 10),
    ('viewing_mode', 'oblique', 'oblique light', 20),
    ('viewing_mode', 'dark_field', 'dark field', 30),
    ('viewing_mode', 'stereo', 'stereo microscope', 40),
    ('viewing_mode', 'compound', 'compound microscope', 50),
    ('viewing_mode', 'hand_lens', 'hand lens', 60),
    ('viewing_mode', 'sem', 'scanning electron microscope', 70);

-- The least fragment count in a 50 mm x 50 mm square for thermally toughened glass of a
-- nominal thickness range (metres, both ends included). Seeded from memory of EN 12150-1
-- (soda-lime float glass); a lab replaces the rows with its edition's table.
CREATE TABLE fragmentation_minimum (
    thickness_from_m REAL NOT NULL CHECK (thickness_from_m > 0),
    thickness_to_m   REAL NOT NULL CHECK (thickness_to_m >= thickness_from_m),
    min_count        INTEGER NOT NULL CHECK (min_count > 0),
    provenance       TEXT NOT NULL,
    PRIMARY KEY (thickness_from_m, thickness_to_m)
) STRICT;

INSERT INTO fragmentation_minimum (thickness_from_m, thickness_to_m, min_count, provenance) VALUES
    (0.003, 0.003, 15, 'EN 12150-1, soda-lime float, from memory: check against your edition'),
    (0.004, 0.012, 40, 'EN 12150-1, soda-lime float, from memory: check against your edition'),
    (0.015, 0.019, 30, 'EN 12150-1, soda-lime float, from memory: check against your edition');
