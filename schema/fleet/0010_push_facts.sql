-- shardlog fleet schema 10: the read tables of a large push from rows the bench sends.
--
-- fleet_push() (schema 6) is unchanged: it witnesses every row (links, hashes, each staged
-- image against the digest its bulk-load row lists) as before. What changes is how it fills
-- the read tables (schema 5) at its end, in fleet_refresh_facts():
--  - a bench may send, beside each staged image of an incident (push_records), that image's
--    read-table row: its facts, its reference and the text of its words, as the bench worked
--    them out (the same values fleet_facts_source gives; `shardlog` sends them for pushes of
--    many incidents). A sent row is used for an incident the push wrote with exactly that
--    image (the digest and the reference match the record); every other incident the push
--    touched is worked out from its image by the view, as before;
--  - the server checks the sent rows by sample: some hundreds of them, picked at random inside
--    the server, are worked out again from the images the push wrote, and one that differs
--    refuses the whole push (nothing of it is applied). `shardlog verify` on the fleet works
--    out every incident's row again and names each that differs;
--  - a push that brings more incidents than the read tables hold (a large bench's first push
--    into a young fleet) drops the read tables' secondary indexes and builds them again at
--    the end, one sort each instead of a million index inserts; readers of the read tables
--    wait for that push's end.

ALTER TABLE push_records
    ADD COLUMN digest            text,
    ADD COLUMN reference         text,
    ADD COLUMN found_on          text,
    ADD COLUMN asset             text,
    ADD COLUMN position          text,
    ADD COLUMN site              text,
    ADD COLUMN product           text,
    ADD COLUMN supplier          text,
    ADD COLUMN lot               text,
    ADD COLUMN status            text,
    ADD COLUMN cause             text,
    ADD COLUMN origin_type       text,
    ADD COLUMN temper            text,
    ADD COLUMN stress_pa         float8,
    ADD COLUMN applied_stress_pa float8,
    ADD COLUMN words             text;

-- The facts and words of these incidents made again: from the rows the push sent where they
-- belong to the image written, from the images by the view for the rest.
CREATE OR REPLACE FUNCTION fleet_refresh_facts(p_ids text[]) RETURNS void
LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp
SET work_mem = '256MB'
SET maintenance_work_mem = '512MB'
AS $$
DECLARE
    v_push    bigint := txid_current();
    v_rest    text[];
    v_sample  text[];
    v_bad     text;
    v_n       bigint;
    v_dropped text[] := '{}';
    v_def     text;
    v_name    text;
BEGIN
    DELETE FROM fleet_facts WHERE id = ANY (p_ids);
    DELETE FROM fleet_search WHERE id = ANY (p_ids);
    CREATE TEMP TABLE fleet_facts_new ON COMMIT DROP AS
        SELECT r.id, r.origin, r.owner, o.ord, r.reference, p.found_on, p.asset, p.position,
               p.site, p.product, p.supplier, p.lot, p.status, p.cause, p.origin_type, p.temper,
               p.stress_pa, p.applied_stress_pa, to_tsvector('simple', p.words) AS doc
        FROM push_records p
        JOIN fleet_records r ON r.entity = 'incident' AND r.id = p.id AND r.digest = p.digest
             AND r.reference = p.reference
        LEFT JOIN fleet_incident_order o ON o.id = r.id
        WHERE p.push = v_push AND p.entity = 'incident' AND p.found_on IS NOT NULL
          AND p.words IS NOT NULL AND r.id = ANY (p_ids);
    GET DIAGNOSTICS v_n = ROW_COUNT;
    IF v_n > 0 THEN
        -- the sent rows checked by a sample the bench cannot foresee
        SELECT array_agg(n.id) INTO v_sample
            FROM (SELECT id FROM fleet_facts_new ORDER BY random() LIMIT 400) n;
        SELECT n.reference INTO v_bad
            FROM fleet_facts_new n
            LEFT JOIN (SELECT * FROM fleet_facts_source WHERE id = ANY (v_sample)) s
                 ON s.id = n.id
            WHERE n.id = ANY (v_sample)
              AND (s.id IS NULL
                   OR row(n.found_on, n.asset, n.position, n.site, n.product, n.supplier, n.lot,
                          n.status, n.cause, n.origin_type, n.temper, n.stress_pa,
                          n.applied_stress_pa, n.doc)
                      IS DISTINCT FROM
                      row(s.found_on, s.asset, s.position, s.site, s.product, s.supplier, s.lot,
                          s.status, s.cause, s.origin_type, s.temper, s.stress_pa,
                          s.applied_stress_pa, s.doc))
            LIMIT 1;
        IF FOUND THEN
            RAISE EXCEPTION 'incident %: the read-table row the push sent is not what its image gives; the push was refused and nothing of it applied', v_bad
                USING ERRCODE = 'data_exception';
        END IF;
        CREATE UNIQUE INDEX fleet_facts_new_id ON fleet_facts_new (id);
    END IF;
    SELECT array_agg(i.id) INTO v_rest FROM unnest(p_ids) i(id)
        WHERE NOT EXISTS (SELECT 1 FROM fleet_facts_new n WHERE n.id = i.id);
    IF v_rest IS NOT NULL THEN
        INSERT INTO fleet_facts_new SELECT * FROM fleet_facts_source WHERE id = ANY (v_rest);
    END IF;
    -- many rows into small read tables: their secondary indexes built again at the end
    IF v_n > 10000 AND v_n > (SELECT count(*) FROM fleet_facts) THEN
        FOR v_name, v_def IN
            SELECT i.indexrelid::regclass::text, pg_get_indexdef(i.indexrelid)
            FROM pg_index i
            WHERE i.indrelid IN ('fleet_facts'::regclass, 'fleet_search'::regclass)
              AND NOT EXISTS (SELECT 1 FROM pg_constraint k WHERE k.conindid = i.indexrelid)
            ORDER BY 1
        LOOP
            EXECUTE 'DROP INDEX ' || v_name;
            v_dropped := v_dropped || v_def;
        END LOOP;
    END IF;
    INSERT INTO fleet_facts (id, origin, owner, ord, reference, found_on, asset, position, site,
                             product, supplier, lot, status, cause, origin_type, temper,
                             stress_pa, applied_stress_pa)
        SELECT id, origin, owner, ord, reference, found_on, asset, position, site, product,
               supplier, lot, status, cause, origin_type, temper, stress_pa, applied_stress_pa
        FROM fleet_facts_new;
    INSERT INTO fleet_search (id, doc) SELECT id, doc FROM fleet_facts_new;
    FOREACH v_def IN ARRAY v_dropped LOOP
        EXECUTE v_def;
    END LOOP;
    DROP TABLE fleet_facts_new;
END $$;
