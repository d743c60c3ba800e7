-- shardlog fleet schema 10: the read tables of a large push from rows the bench sends.
--
-- fleet_push() witnesses every row as before (links, hashes, each staged image against the
-- digest its bulk-load row lists; two of its checks are rewritten at the end of this file).
-- What changes is how it fills the read tables (schema 5) at its end, in
-- fleet_refresh_facts():
--  - a bench may send, beside each staged image of an incident (push_records), that image's
--    read-table row: its facts, its reference and the text of its words, as the bench worked
--    them out (the same values fleet_facts_source gives; `shardlog` sends them for pushes of
--    many incidents). A sent row is used for an incident the push wrote with exactly that
--    image (the digest and the reference match the record); every other incident the push
--    touched is worked out from its image by the view, as before;
--  - the server checks the sent rows by sample: some hundreds of them, picked at random inside
--    the server, are worked out again from the images the push wrote, and one that differs
--    refuses the whole push (nothing of it is applied). `shardlog verify` on the fleet works
--    out every incident's row again and names each that differs.
-- (Dropping the read tables' indexes for a large push and building them again at its end was
-- measured and dropped: at 200,000 incidents into an empty fleet it cost the server more CPU
-- than inserting into them.)

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
AS $$
DECLARE
    v_push    bigint := txid_current();
    v_rest    text[];
    v_sample  text[];
    v_bad     text;
    v_n       bigint;
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
    INSERT INTO fleet_facts (id, origin, owner, ord, reference, found_on, asset, position, site,
                             product, supplier, lot, status, cause, origin_type, temper,
                             stress_pa, applied_stress_pa)
        SELECT id, origin, owner, ord, reference, found_on, asset, position, site, product,
               supplier, lot, status, cause, origin_type, temper, stress_pa, applied_stress_pa
        FROM fleet_facts_new;
    INSERT INTO fleet_search (id, doc) SELECT id, doc FROM fleet_facts_new;
    DROP TABLE fleet_facts_new;
END $$;

-- NULL when the push's transfers can be applied, else why not (schema 4's checks). Each
-- transfer's row is parsed once, then the push's later rows of its incident are looked up:
-- the planner knows nothing of how many rows a push staged, and a plan that parsed every
-- transfer row again for each staged row took seconds under the fleet's lock.
CREATE OR REPLACE FUNCTION fleet_transfer_problem(p_push bigint, p_bench text, p_head_seq bigint)
RETURNS text LANGUAGE plpgsql STABLE AS $$
DECLARE
    v record;
BEGIN
    SELECT t.seq INTO v FROM fleet_push_transfers(p_push, p_head_seq) t
        WHERE t.incident IS NULL OR t.to_bench IS NULL OR t.to_bench !~ '^[A-Z][A-Z0-9]{1,7}$'
           OR t.to_bench = p_bench
        ORDER BY t.seq LIMIT 1;
    IF FOUND THEN
        RETURN format('row %s of bench %s is a transfer without an incident or another bench to go to',
                      v.seq, p_bench);
    END IF;
    WITH t AS MATERIALIZED (SELECT * FROM fleet_push_transfers(p_push, p_head_seq))
    SELECT t.seq AS sent, e.seq AS edited, t.incident, t.to_bench INTO v
        FROM t
        JOIN push_entries e ON e.push = p_push AND e.seq > t.seq AND e.entity = 'incident'
             AND e.entity_id = t.incident AND e.actor <> 'fleet:pull'
        ORDER BY e.seq LIMIT 1;
    IF FOUND THEN
        RETURN format('row %s of bench %s changes incident %s after row %s sent it to bench %s; a push ends at the transfer, the change comes in the next push',
                      v.edited, p_bench, v.incident, v.sent, v.to_bench);
    END IF;
    RETURN NULL;
END $$;

-- fleet_push() as schema 6 made it (schema 2 describes each step, schema 4 the login,
-- transfer and resolution steps, schema 6 the two locks), with two changes:
--  - the fork check looks up only the staged rows up to the witnessed head, each by its key
--    (with no figures for the staged rows, the planner once joined every staged row of a
--    push of pulled rows with every witnessed row of its bench: minutes, not milliseconds);
--  - the transfer check reads only the push's own rows, so it runs before the fleet's lock.
CREATE OR REPLACE FUNCTION fleet_push(p_bench text)
RETURNS TABLE (status text, detail text, receipt_seq bigint, receipt_hash text,
               head_seq bigint, head_hash text, records bigint, conflicts bigint)
LANGUAGE plpgsql SECURITY DEFINER
SET search_path = public, pg_temp
SET work_mem = '256MB'
SET enable_nestloop = on
SET default_toast_compression = 'lz4'
-- the facts' plan looks each image's parts up once: a cache keyed by the whole image only
-- fills memory
SET enable_memoize = off
AS $$
DECLARE
    v_push      bigint := txid_current();
    v_head_seq  bigint;
    v_head_hash text;
    v_bad       record;
    v_n         bigint;
    v_last_seq  bigint;
    v_last_hash text;
    v_prev_seq  bigint;
    v_prev      text;
    v_fleet_seq bigint;
    v_at        text;
    v_records   bigint := 0;
    v_conflicts bigint := 0;
    v_hash      text;
    v_problem   text;
    v_ids       text[];
BEGIN
    IF p_bench IS NULL OR p_bench !~ '^[A-Z][A-Z0-9]{1,7}$' THEN
        PERFORM fleet_refuse(v_push, coalesce(p_bench, ''), 'bench', NULL, NULL, NULL,
            'a bench code is 2 to 8 capital letters or digits, starting with a letter');
        RETURN QUERY SELECT 'refused'::text, 'bad bench code'::text, NULL::bigint, NULL::text,
            NULL::bigint, NULL::text, 0::bigint, 0::bigint;
        RETURN;
    END IF;
    -- only the bench's own login pushes as the bench
    v_problem := fleet_login_problem(p_bench);
    IF v_problem IS NOT NULL THEN
        PERFORM fleet_refuse(v_push, p_bench, 'login', NULL, NULL, NULL, v_problem);
        RETURN QUERY SELECT 'refused'::text, 'login'::text, NULL::bigint, NULL::text,
            NULL::bigint, NULL::text, 0::bigint, 0::bigint;
        RETURN;
    END IF;
    -- one push of this bench at a time (locks are always taken in this order: the bench's,
    -- then the fleet's); the head read after it is the one the last push of the bench left
    PERFORM pg_advisory_xact_lock(1397247049, hashtext(p_bench));
    SELECT b.head_seq, b.head_hash INTO v_head_seq, v_head_hash
        FROM fleet_benches b WHERE b.code = p_bench;
    IF NOT FOUND THEN
        v_head_seq := 0;
        v_head_hash := repeat('0', 64);
    END IF;

    -- 1. rows already witnessed come back with the same hash, or this is a fork
    -- (only rows up to the head can be witnessed ones; each looked up by its key, whatever
    -- the planner believes of the staged rows' number)
    SELECT e.seq, e.hash AS pushed, c.hash AS witnessed INTO v_bad
        FROM push_entries e
        CROSS JOIN LATERAL (SELECT w.hash FROM bench_chain w
                            WHERE w.bench = p_bench AND w.seq = e.seq OFFSET 0) c
        WHERE e.push = v_push AND e.seq <= v_head_seq AND e.hash IS DISTINCT FROM c.hash
        ORDER BY e.seq LIMIT 1;
    IF FOUND THEN
        PERFORM fleet_refuse(v_push, p_bench, 'fork', v_bad.seq, v_bad.pushed, v_bad.witnessed,
            format('row %s of bench %s has hash %s, but the fleet witnessed %s: the bench''s history was rewritten or restored from an old copy',
                   v_bad.seq, p_bench, left(v_bad.pushed, 12), left(v_bad.witnessed, 12)));
        RETURN QUERY SELECT 'refused'::text, 'fork'::text, NULL::bigint, NULL::text,
            v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        RETURN;
    END IF;

    -- 2. the new rows: in sequence from the head, each linked to the one before, each hash
    -- its content
    SELECT n.seq, n.k, n.prev_hash, n.hash, n.link, n.ok_hash, n.ok_op INTO v_bad FROM (
        SELECT e.seq, e.prev_hash, e.hash,
               row_number() OVER w AS k,
               coalesce(lag(e.hash) OVER w, v_head_hash) AS link,
               e.op IN ('insert', 'update', 'delete') AS ok_op,
               CASE WHEN e.prev_hash ~ '^[0-9a-f]{64}$'
                    THEN e.hash = fleet_link_hash(e.prev_hash, fleet_row_text(e.seq, e.at,
                            e.actor, e.entity, e.entity_id, e.op, e.before, e.after))
                    ELSE false END AS ok_hash
        FROM push_entries e WHERE e.push = v_push AND e.seq > v_head_seq
        WINDOW w AS (ORDER BY e.seq)
    ) n
    WHERE n.seq <> v_head_seq + n.k OR n.prev_hash <> n.link OR NOT n.ok_hash OR NOT n.ok_op
    ORDER BY n.seq LIMIT 1;
    IF FOUND THEN
        IF v_bad.seq <> v_head_seq + v_bad.k THEN
            PERFORM fleet_refuse(v_push, p_bench, 'gap', v_bad.seq, v_bad.hash, NULL,
                format('row %s of bench %s came where row %s was due', v_bad.seq, p_bench,
                       v_head_seq + v_bad.k));
            RETURN QUERY SELECT 'refused'::text, 'gap'::text, NULL::bigint, NULL::text,
                v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        ELSIF v_bad.prev_hash <> v_bad.link AND v_bad.k = 1 THEN
            PERFORM fleet_refuse(v_push, p_bench, 'fork', v_bad.seq, v_bad.prev_hash, v_head_hash,
                format('row %s of bench %s does not follow the head the fleet witnessed (row %s, %s): the bench''s history was rewritten or restored from an old copy',
                       v_bad.seq, p_bench, v_head_seq, left(v_head_hash, 12)));
            RETURN QUERY SELECT 'refused'::text, 'fork'::text, NULL::bigint, NULL::text,
                v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        ELSE
            PERFORM fleet_refuse(v_push, p_bench, 'forged', v_bad.seq, v_bad.hash, NULL,
                format('row %s of bench %s: its hash is not its content or its link is broken; the push was not made by an intact bench',
                       v_bad.seq, p_bench));
            RETURN QUERY SELECT 'refused'::text, 'forged'::text, NULL::bigint, NULL::text,
                v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        END IF;
        RETURN;
    END IF;
    SELECT count(*), max(e.seq) INTO v_n, v_last_seq
        FROM push_entries e WHERE e.push = v_push AND e.seq > v_head_seq;
    IF v_n = 0 THEN
        DELETE FROM push_entries WHERE push = v_push;
        DELETE FROM push_records WHERE push = v_push;
        DELETE FROM push_files WHERE push = v_push;
        UPDATE fleet_benches SET last_sync = now() WHERE code = p_bench;
        RETURN QUERY SELECT 'unchanged'::text, ''::text, r.fleet_seq, r.hash, v_head_seq,
                v_head_hash, 0::bigint, 0::bigint
            FROM (SELECT NULL) x
            LEFT JOIN LATERAL (SELECT f.fleet_seq, f.hash FROM fleet_receipts f
                               WHERE f.bench = p_bench ORDER BY f.fleet_seq DESC LIMIT 1) r ON true;
        RETURN;
    END IF;
    SELECT e.hash INTO v_last_hash FROM push_entries e
        WHERE e.push = v_push AND e.seq = v_last_seq;

    -- the files: each one's content is its name
    SELECT f.sha256 INTO v_bad FROM push_files f
        WHERE f.push = v_push AND (f.sha256 !~ '^[0-9a-f]{64}$' OR encode(sha256(f.bytes), 'hex') <> f.sha256)
        LIMIT 1;
    IF FOUND THEN
        PERFORM fleet_refuse(v_push, p_bench, 'file', NULL, NULL, NULL,
            format('attachment %s arrived with other content', left(v_bad.sha256, 16)));
        RETURN QUERY SELECT 'refused'::text, 'file'::text, NULL::bigint, NULL::text,
            v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        RETURN;
    END IF;

    -- 3. every record the new rows touch, with its first and last touch
    CREATE TEMP TABLE fleet_touch ON COMMIT DROP AS
        SELECT e.seq, e.op, e.entity, e.entity_id AS id, e.before, e.after,
               CASE WHEN e.after IS NULL THEN NULL
                    ELSE encode(sha256(convert_to(e.after, 'UTF8')), 'hex') END AS digest,
               false AS batched
        FROM push_entries e
        WHERE e.push = v_push AND e.seq > v_head_seq AND e.entity <> 'batch'
          AND e.actor <> 'fleet:pull'
        UNION ALL
        SELECT e.seq, 'insert', m.entity, r.item->>0, NULL, NULL, r.item->>1, true
        FROM push_entries e
        -- each manifest parsed once (OFFSET 0 keeps the planner from copying the parse
        -- into every listed record)
        CROSS JOIN LATERAL (SELECT x.j->>'entity' AS entity, x.j->'records' AS list
                            FROM (SELECT e.after::jsonb AS j OFFSET 0) x OFFSET 0) m
        CROSS JOIN LATERAL jsonb_array_elements(m.list) AS r(item)
        WHERE e.push = v_push AND e.seq > v_head_seq AND e.entity = 'batch'
          AND e.actor <> 'fleet:pull';
    -- each record's last touch with the image it left, and its first touch (schema 3)
    PERFORM set_config('enable_nestloop', 'off', true);
    CREATE TEMP TABLE fleet_apply ON COMMIT DROP AS
        SELECT l.entity, l.id, l.seq AS last_seq, l.batched, l.digest,
               CASE WHEN l.batched THEN p.image ELSE l.after END AS image,
               f.op AS first_op,
               CASE WHEN f.before IS NULL THEN NULL
                    ELSE encode(sha256(convert_to(f.before, 'UTF8')), 'hex') END AS base
        FROM (SELECT DISTINCT ON (t.entity, t.id) t.* FROM fleet_touch t
              ORDER BY t.entity, t.id, t.seq DESC) l
        JOIN (SELECT DISTINCT ON (t.entity, t.id) t.* FROM fleet_touch t
              ORDER BY t.entity, t.id, t.seq) f ON f.entity = l.entity AND f.id = l.id
        LEFT JOIN push_records p ON l.batched AND p.push = v_push AND p.entity = l.entity
             AND p.id = l.id AND encode(sha256(convert_to(p.image, 'UTF8')), 'hex') = l.digest;
    PERFORM set_config('enable_nestloop', 'on', true);
    BEGIN
        CREATE UNIQUE INDEX fleet_apply_key ON fleet_apply (entity, id);
    EXCEPTION WHEN unique_violation THEN
        -- a record staged twice with the content its row lists is one record: keep one
        DELETE FROM fleet_apply a USING (
            SELECT ctid, row_number() OVER (PARTITION BY entity, id) AS n FROM fleet_apply
        ) d WHERE a.ctid = d.ctid AND d.n > 1;
        CREATE UNIQUE INDEX fleet_apply_key ON fleet_apply (entity, id);
    END;
    ANALYZE fleet_apply (entity, id, batched, first_op);
    SELECT a.entity, a.id, a.last_seq INTO v_bad FROM fleet_apply a
        WHERE a.batched AND a.image IS NULL LIMIT 1;
    IF FOUND THEN
        PERFORM fleet_refuse(v_push, p_bench, 'record', v_bad.last_seq, NULL, NULL,
            format('the push lacks the %s %s that row %s lists (or sent it with other content)',
                   v_bad.entity, v_bad.id, v_bad.last_seq));
        RETURN QUERY SELECT 'refused'::text, 'record'::text, NULL::bigint, NULL::text,
            v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        RETURN;
    END IF;

    -- a transfer ends its incident's rows in a push (the push's own rows only: checked
    -- before the fleet's lock)
    v_problem := fleet_transfer_problem(v_push, p_bench, v_head_seq);
    IF v_problem IS NOT NULL THEN
        PERFORM fleet_refuse(v_push, p_bench, 'transfer', NULL, NULL, NULL, v_problem);
        RETURN QUERY SELECT 'refused'::text, 'transfer'::text, NULL::bigint, NULL::text,
            v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        RETURN;
    END IF;

    -- from here on, what every bench shares: the fleet's lock, held to the commit
    PERFORM pg_advisory_xact_lock(1397247047);
    INSERT INTO fleet_benches (code) VALUES (p_bench) ON CONFLICT DO NOTHING;

    -- 4. a record made at this bench whose key the fleet holds from another one
    SELECT a.entity, a.id, a.last_seq, r.origin INTO v_bad
        FROM fleet_apply a JOIN fleet_records r ON r.entity = a.entity AND r.id = a.id
        WHERE a.entity <> 'lookup' AND a.first_op = 'insert' AND r.origin <> p_bench
        LIMIT 1;
    IF FOUND THEN
        PERFORM fleet_refuse(v_push, p_bench, 'collision', v_bad.last_seq, NULL, NULL,
            format('%s %s was made at bench %s; bench %s cannot make it again (a key collision, not an edit)',
                   v_bad.entity, v_bad.id, v_bad.origin, p_bench));
        RETURN QUERY SELECT 'refused'::text, 'collision'::text, NULL::bigint, NULL::text,
            v_head_seq, v_head_hash, 0::bigint, 0::bigint;
        RETURN;
    END IF;

    -- 5. apply: the receipt's number and time first, then the records
    v_at := to_char(clock_timestamp() AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"');
    SELECT f.fleet_seq, f.hash INTO v_prev_seq, v_prev
        FROM fleet_receipts f ORDER BY f.fleet_seq DESC LIMIT 1;
    v_fleet_seq := coalesce(v_prev_seq, 0) + 1;
    v_prev := coalesce(v_prev, repeat('0', 64));

    -- the read tables are kept here, once: the order of creation first, the facts at the end
    PERFORM fleet_order_push(v_push, p_bench, v_head_seq);

    -- lookup entries: one per origin, always this bench's own
    INSERT INTO fleet_records AS r (entity, id, origin, owner, image, digest, reference,
                                    bench_seq, fleet_seq)
        SELECT a.entity, a.id, p_bench, p_bench, a.image, a.digest, NULL, a.last_seq, v_fleet_seq
        FROM fleet_apply a WHERE a.entity = 'lookup'
        ON CONFLICT (entity, id, origin) DO UPDATE
            SET image = excluded.image, digest = excluded.digest,
                bench_seq = excluded.bench_seq, fleet_seq = excluded.fleet_seq;
    -- edits of records the fleet holds: the owner's, on the version the fleet holds, apply;
    -- any other becomes a conflict
    INSERT INTO fleet_conflicts (entity, record_id, bench, bench_seq, fleet_image, bench_image)
        SELECT a.entity, a.id, p_bench, a.last_seq, r.image, a.image
        FROM fleet_apply a JOIN fleet_records r ON r.entity = a.entity AND r.id = a.id
        WHERE a.entity <> 'lookup'
          AND (r.owner <> p_bench OR (a.first_op <> 'insert' AND r.digest IS DISTINCT FROM a.base));
    GET DIAGNOSTICS v_conflicts = ROW_COUNT;
    UPDATE fleet_records r SET image = a.image, digest = a.digest,
            reference = CASE WHEN a.entity = 'incident' AND a.image IS NOT NULL
                             THEN fleet_reference(r.origin, a.image) END,
            bench_seq = a.last_seq, fleet_seq = v_fleet_seq
        FROM fleet_apply a
        WHERE r.entity = a.entity AND r.id = a.id AND a.entity <> 'lookup'
          AND r.owner = p_bench AND (a.first_op = 'insert' OR r.digest IS NOT DISTINCT FROM a.base);
    GET DIAGNOSTICS v_n = ROW_COUNT;
    v_records := v_n;
    INSERT INTO fleet_records (entity, id, origin, owner, image, digest, reference, bench_seq,
                               fleet_seq)
        SELECT a.entity, a.id, p_bench, p_bench, a.image, a.digest,
               CASE WHEN a.entity = 'incident' AND a.image IS NOT NULL
                    THEN CASE WHEN x.r ~ '^BR-[0-9]{6}-[0-9]+$' THEN p_bench || '/' || x.r ELSE x.r END END,
               a.last_seq, v_fleet_seq
        FROM fleet_apply a
        -- the reference as fleet_reference() reads it, without a call per record
        CROSS JOIN LATERAL (SELECT split_part(split_part(a.image, '"reference":"', 2), '"', 1) AS r) x
        WHERE a.entity <> 'lookup'
          AND NOT EXISTS (SELECT 1 FROM fleet_records r WHERE r.entity = a.entity AND r.id = a.id);
    GET DIAGNOSTICS v_n = ROW_COUNT;
    v_records := v_records + v_n;

    -- transfers move ownership, resolutions close the conflicts they name
    v_conflicts := v_conflicts + fleet_apply_moves(v_push, p_bench, v_head_seq, v_fleet_seq);

    INSERT INTO fleet_files (sha256, bytes)
        SELECT DISTINCT ON (f.sha256) f.sha256, f.bytes FROM push_files f WHERE f.push = v_push
        ON CONFLICT DO NOTHING;

    -- 6. witness the rows, link the receipt, move the head
    INSERT INTO bench_chain (bench, seq, at, actor, entity, entity_id, op, before, after,
                             prev_hash, hash, fleet_seq)
        SELECT p_bench, e.seq, e.at, e.actor, e.entity, e.entity_id, e.op, e.before, e.after,
               e.prev_hash, e.hash, v_fleet_seq
        FROM push_entries e WHERE e.push = v_push AND e.seq > v_head_seq;
    v_hash := fleet_link_hash(v_prev, fleet_receipt_text(v_fleet_seq, v_at, p_bench,
        v_head_seq + 1, v_last_seq, v_last_hash, v_records));
    INSERT INTO fleet_receipts (fleet_seq, at, bench, from_seq, to_seq, bench_hash, records,
                                prev_hash, hash)
        VALUES (v_fleet_seq, v_at, p_bench, v_head_seq + 1, v_last_seq, v_last_hash, v_records,
                v_prev, v_hash);
    UPDATE fleet_benches SET head_seq = v_last_seq, head_hash = v_last_hash, last_sync = now()
        WHERE code = p_bench;
    -- the facts and words of every incident the push wrote or sent away
    SELECT array_agg(i.id) INTO v_ids FROM (
        SELECT a.id FROM fleet_apply a WHERE a.entity = 'incident'
        UNION
        SELECT t.incident FROM fleet_push_transfers(v_push, v_head_seq) t
        WHERE t.incident IS NOT NULL
    ) i;
    IF v_ids IS NOT NULL THEN
        PERFORM fleet_refresh_facts(v_ids);
    END IF;
    DELETE FROM push_entries WHERE push = v_push;
    DELETE FROM push_records WHERE push = v_push;
    DELETE FROM push_files WHERE push = v_push;
    RETURN QUERY SELECT 'accepted'::text, ''::text, v_fleet_seq, v_hash, v_last_seq,
        v_last_hash, v_records, v_conflicts;
END $$;
