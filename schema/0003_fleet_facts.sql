-- shardlog schema 3: a narrow copy of what the fleet statistics read, one row per incident.
-- The incidents table is wide (text ids, notes, descriptions): reading a million rows of it
-- for `stats` costs seconds; this table is about a tenth of its size. Text values are kept
-- once in fleet_values and referred to by number. Triggers keep the copy in step inside the
-- transaction of every write to incidents (through shardlog or not); `verify` checks that it
-- agrees with incidents. Nothing here is audited: it is derived, like the text index.

CREATE TABLE fleet_values (
    n     INTEGER PRIMARY KEY,
    value TEXT NOT NULL UNIQUE
) STRICT;

CREATE TABLE incident_facts (
    seq               INTEGER PRIMARY KEY,  -- incidents.seq
    found_on          TEXT NOT NULL,
    -- fleet_values.n of the incident's text in the column of the same name
    cause_category    INTEGER,
    origin_type       INTEGER,
    temper            INTEGER,
    supplier_id       INTEGER,
    product_id        INTEGER,
    lot_id            INTEGER,
    site_id           INTEGER,
    asset_id          INTEGER,
    stress_pa         REAL,
    applied_stress_pa REAL
) STRICT;

-- existing incidents are copied in by the store right after this file, in the same
-- transaction (one pass over incidents; see incidents::fill_fleet_facts)

CREATE TRIGGER incident_facts_insert AFTER INSERT ON incidents BEGIN
    INSERT INTO fleet_values (value)
        SELECT v FROM (
            SELECT NEW.cause_category AS v UNION SELECT NEW.origin_type UNION SELECT NEW.temper
            UNION SELECT NEW.supplier_id UNION SELECT NEW.product_id UNION SELECT NEW.lot_id
            UNION SELECT NEW.site_id UNION SELECT NEW.asset_id
        ) WHERE v IS NOT NULL AND NOT EXISTS (SELECT 1 FROM fleet_values WHERE value = v);
    INSERT INTO incident_facts VALUES (NEW.seq, NEW.found_on,
        (SELECT n FROM fleet_values WHERE value = NEW.cause_category),
        (SELECT n FROM fleet_values WHERE value = NEW.origin_type),
        (SELECT n FROM fleet_values WHERE value = NEW.temper),
        (SELECT n FROM fleet_values WHERE value = NEW.supplier_id),
        (SELECT n FROM fleet_values WHERE value = NEW.product_id),
        (SELECT n FROM fleet_values WHERE value = NEW.lot_id),
        (SELECT n FROM fleet_values WHERE value = NEW.site_id),
        (SELECT n FROM fleet_values WHERE value = NEW.asset_id),
        NEW.stress_pa, NEW.applied_stress_pa);
END;

CREATE TRIGGER incident_facts_update AFTER UPDATE OF seq, found_on, cause_category,
    origin_type, temper, supplier_id, product_id, lot_id, site_id, asset_id, stress_pa,
    applied_stress_pa ON incidents BEGIN
    DELETE FROM incident_facts WHERE seq = OLD.seq;
    INSERT INTO fleet_values (value)
        SELECT v FROM (
            SELECT NEW.cause_category AS v UNION SELECT NEW.origin_type UNION SELECT NEW.temper
            UNION SELECT NEW.supplier_id UNION SELECT NEW.product_id UNION SELECT NEW.lot_id
            UNION SELECT NEW.site_id UNION SELECT NEW.asset_id
        ) WHERE v IS NOT NULL AND NOT EXISTS (SELECT 1 FROM fleet_values WHERE value = v);
    INSERT INTO incident_facts VALUES (NEW.seq, NEW.found_on,
        (SELECT n FROM fleet_values WHERE value = NEW.cause_category),
        (SELECT n FROM fleet_values WHERE value = NEW.origin_type),
        (SELECT n FROM fleet_values WHERE value = NEW.temper),
        (SELECT n FROM fleet_values WHERE value = NEW.supplier_id),
        (SELECT n FROM fleet_values WHERE value = NEW.product_id),
        (SELECT n FROM fleet_values WHERE value = NEW.lot_id),
        (SELECT n FROM fleet_values WHERE value = NEW.site_id),
        (SELECT n FROM fleet_values WHERE value = NEW.asset_id),
        NEW.stress_pa, NEW.applied_stress_pa);
END;

CREATE TRIGGER incident_facts_delete AFTER DELETE ON incidents BEGIN
    DELETE FROM incident_facts WHERE seq = OLD.seq;
END;
