-- shardlog fleet schema 7: the incidents counted by month, so that `stats` reads thousands of
-- rows and not millions. One row per bench (owner), calendar month found ('YYYY-MM') and
-- values of the keys the statistics group and filter by; `n` incidents have them. Asset type
-- is not among them (it is the asset's, not the incident's: stats by asset type reads the
-- facts).
--
-- Statement triggers on fleet_facts keep it in step, whatever writes fleet_facts (the ingest
-- triggers of 0005, a set-based refresh after a push, a bulk fill): each statement adds the
-- rows it inserted and takes away the rows it deleted, in one grouped pass over its
-- transition tables. A loader that bypasses triggers (or TRUNCATEs fleet_facts) calls
-- fleet_count_months_rebuild() afterwards. Rows are keyed by their bench, so the pushes of
-- different benches do not write the same rows.

CREATE TABLE fleet_fact_months (
    owner       text NOT NULL,
    month       text COLLATE "C" NOT NULL,
    cause       text COLLATE "C",
    origin_type text COLLATE "C",
    supplier    text COLLATE "C",
    product     text COLLATE "C",
    lot         text COLLATE "C",
    site        text COLLATE "C",
    temper      text COLLATE "C",
    n           bigint NOT NULL,
    CONSTRAINT fleet_fact_months_cell UNIQUE NULLS NOT DISTINCT
        (owner, month, cause, origin_type, supplier, product, lot, site, temper)
);
CREATE INDEX fleet_fact_months_month ON fleet_fact_months (month);
-- the cells a change emptied, found without reading the table
CREATE INDEX fleet_fact_months_empty ON fleet_fact_months (n) WHERE n = 0;

-- Each statement's change, grouped by cell and signed, added to the cells in key order (two
-- statements never wait on each other in opposite orders); then the cells left at zero go.
CREATE FUNCTION fleet_facts_counted() RETURNS trigger
LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $$
BEGIN
    IF TG_OP = 'INSERT' THEN
        INSERT INTO fleet_fact_months AS m (owner, month, cause, origin_type, supplier,
                                            product, lot, site, temper, n)
            SELECT owner, left(found_on, 7), cause, origin_type, supplier, product, lot, site,
                   temper, count(*)
            FROM new_rows
            GROUP BY 1, 2, 3, 4, 5, 6, 7, 8, 9 ORDER BY 1, 2, 3, 4, 5, 6, 7, 8, 9
        ON CONFLICT ON CONSTRAINT fleet_fact_months_cell DO UPDATE SET n = m.n + excluded.n;
    ELSIF TG_OP = 'DELETE' THEN
        INSERT INTO fleet_fact_months AS m (owner, month, cause, origin_type, supplier,
                                            product, lot, site, temper, n)
            SELECT owner, left(found_on, 7), cause, origin_type, supplier, product, lot, site,
                   temper, -count(*)
            FROM old_rows
            GROUP BY 1, 2, 3, 4, 5, 6, 7, 8, 9 ORDER BY 1, 2, 3, 4, 5, 6, 7, 8, 9
        ON CONFLICT ON CONSTRAINT fleet_fact_months_cell DO UPDATE SET n = m.n + excluded.n;
    ELSE
        -- an update that moves no incident between cells (the order of creation filled in)
        -- writes nothing
        INSERT INTO fleet_fact_months AS m (owner, month, cause, origin_type, supplier,
                                            product, lot, site, temper, n)
            SELECT owner, month, cause, origin_type, supplier, product, lot, site, temper,
                   sum(d)
            FROM (SELECT owner, left(found_on, 7) AS month, cause, origin_type, supplier,
                         product, lot, site, temper, -1 AS d
                  FROM old_rows
                  UNION ALL
                  SELECT owner, left(found_on, 7), cause, origin_type, supplier, product, lot,
                         site, temper, 1
                  FROM new_rows) x
            GROUP BY 1, 2, 3, 4, 5, 6, 7, 8, 9
            HAVING sum(d) <> 0
            ORDER BY 1, 2, 3, 4, 5, 6, 7, 8, 9
        ON CONFLICT ON CONSTRAINT fleet_fact_months_cell DO UPDATE SET n = m.n + excluded.n;
    END IF;
    DELETE FROM fleet_fact_months WHERE n = 0;
    RETURN NULL;
END $$;
CREATE TRIGGER fleet_facts_counted_inserted AFTER INSERT ON fleet_facts
    REFERENCING NEW TABLE AS new_rows
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_facts_counted();
CREATE TRIGGER fleet_facts_counted_updated AFTER UPDATE ON fleet_facts
    REFERENCING OLD TABLE AS old_rows NEW TABLE AS new_rows
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_facts_counted();
CREATE TRIGGER fleet_facts_counted_deleted AFTER DELETE ON fleet_facts
    REFERENCING OLD TABLE AS old_rows
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_facts_counted();

-- The counts made again from fleet_facts as a whole (after a load that bypassed triggers).
CREATE FUNCTION fleet_count_months_rebuild() RETURNS void
LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $$
BEGIN
    DELETE FROM fleet_fact_months;
    INSERT INTO fleet_fact_months (owner, month, cause, origin_type, supplier, product, lot,
                                   site, temper, n)
        SELECT owner, left(found_on, 7), cause, origin_type, supplier, product, lot, site,
               temper, count(*)
        FROM fleet_facts
        GROUP BY 1, 2, 3, 4, 5, 6, 7, 8, 9
        ORDER BY 1, 2, 3, 4, 5, 6, 7, 8, 9;
END $$;

-- What a fleet already held before this migration.
SELECT fleet_count_months_rebuild();
