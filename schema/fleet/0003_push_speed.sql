-- shardlog fleet schema 3: the same fleet_push() (the same checks in the same order, the same
-- refusals, the same answer; schema 2 describes each step), cheaper on big pushes.
--  - Images are compressed with LZ4 instead of PostgreSQL's default (pglz): an incident's
--    canonical image is about 2.4 kB, over the size at which PostgreSQL compresses, and pglz
--    cost more than half of the server's time in COPY of the staged images. The function
--    writes its own tables with LZ4 too.
--  - A staged image is found through its push alone (an index on push, not on push, entity
--    and id: the function reads a push's images in one hashed pass, never one by one).
--  - Inside fleet_push(): sorts and hashes in memory (work_mem for the function only); each
--    record's image is picked, and its SHA-256 checked, while the table of what to apply is
--    made (no second pass rewriting that table with the images); the incident reference is
--    read without a function call per record (the same text as fleet_reference()).

ALTER TABLE push_records ALTER COLUMN image SET COMPRESSION lz4;
ALTER TABLE push_entries ALTER COLUMN before SET COMPRESSION lz4,
                         ALTER COLUMN after SET COMPRESSION lz4;
ALTER TABLE fleet_records ALTER COLUMN image SET COMPRESSION lz4;
ALTER TABLE bench_chain ALTER COLUMN before SET COMPRESSION lz4,
                        ALTER COLUMN after SET COMPRESSION lz4;
DROP INDEX push_records_push;
CREATE INDEX push_records_push ON push_records (push);

-- What each step does and refuses: schema 2.
CREATE OR REPLACE FUNCTION fleet_push(p_bench text)
RETURNS TABLE (status text, detail text, receipt_seq bigint, receipt_hash text,
               head_seq bigint, head_hash text, records bigint, conflicts bigint)
LANGUAGE plpgsql SECURITY DEFINER
SET search_path = public, pg_temp
SET work_mem = '256MB'
SET enable_nestloop = on
SET default_toast_compression = 'lz4'
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
    v_at        text := to_char(clock_timestamp() AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"');
    v_records   bigint := 0;
    v_conflicts bigint := 0;
    v_hash      text;
BEGIN
    IF p_bench IS NULL OR p_bench !~ '^[A-Z][A-Z0-9]{1,7}$' THEN
        PERFORM fleet_refuse(v_push, coalesce(p_bench, ''), 'bench', NULL, NULL, NULL,
            'a bench code is 2 to 8 capital letters or digits, starting with a letter');
        RETURN QUERY SELECT 'refused'::text, 'bad bench code'::text, NULL::bigint, NULL::text,
            NULL::bigint, NULL::text, 0::bigint, 0::bigint;
        RETURN;
    END IF;
    -- one push at a time into the fleet's chain; the order of locks is always this one
    PERFORM pg_advisory_xact_lock(1397247047);
    INSERT INTO fleet_benches (code) VALUES (p_bench) ON CONFLICT DO NOTHING;
    SELECT b.head_seq, b.head_hash INTO v_head_seq, v_head_hash
        FROM fleet_benches b WHERE b.code = p_bench FOR UPDATE;

    -- 1. rows already witnessed come back with the same hash, or this is a fork
    SELECT e.seq, e.hash AS pushed, c.hash AS witnessed INTO v_bad
        FROM push_entries e JOIN bench_chain c ON c.bench = p_bench AND c.seq = e.seq
        WHERE e.push = v_push AND e.hash IS DISTINCT FROM c.hash
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
    -- each record's last touch, with the image it left (a row's `after`, or the staged
    -- image whose SHA-256 the manifest lists: each staged image read and hashed once), and its
    -- first touch (the operation and the image it started from); the joins hash whatever
    -- the planner guesses of the staging tables (they hold no statistics of this push)
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

    -- 5. apply: the receipt's number first, then the records
    SELECT f.fleet_seq, f.hash INTO v_prev_seq, v_prev
        FROM fleet_receipts f ORDER BY f.fleet_seq DESC LIMIT 1;
    v_fleet_seq := coalesce(v_prev_seq, 0) + 1;
    v_prev := coalesce(v_prev, repeat('0', 64));

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
    -- the owner's edit settles the record's open conflicts
    UPDATE fleet_conflicts c SET resolved_at = now(), resolved_seq = a.last_seq
        FROM fleet_apply a JOIN fleet_records r ON r.entity = a.entity AND r.id = a.id
        WHERE c.entity = a.entity AND c.record_id = a.id AND c.resolved_at IS NULL
          AND c.bench_seq <> a.last_seq AND r.owner = p_bench
          AND (a.first_op = 'insert' OR r.digest IS NOT DISTINCT FROM a.base);
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
    DELETE FROM push_entries WHERE push = v_push;
    DELETE FROM push_records WHERE push = v_push;
    DELETE FROM push_files WHERE push = v_push;
    RETURN QUERY SELECT 'accepted'::text, ''::text, v_fleet_seq, v_hash, v_last_seq,
        v_last_hash, v_records, v_conflicts;
END $$;
