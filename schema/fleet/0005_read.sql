-- shardlog fleet schema 5: what fleet users read. The pushed images stay the record
-- (fleet_records); beside them the fleet keeps, on ingest, a narrow facts table of the incidents
-- (one row each: the columns the log shows, filters and sorts by, and the statistics group by),
-- a text-search table (a tsvector with a GIN index, the counterpart of the bench's FTS5) and
-- each incident's place in its bench's order of creation (the bench lists ties in that order).
-- Triggers on fleet_records and bench_chain keep them in step with every push, whatever the
-- body of fleet_push(): they see the rows a statement wrote (transition tables), once per
-- statement, so a push of many records pays one set-based pass.

-- A number as the audit images write it ("f64:" and the 16 hex digits of its IEEE 754 bits)
-- as a float8, bit for bit; NULL for anything else.
CREATE FUNCTION fleet_f64(t text) RETURNS float8
LANGUAGE plpgsql IMMUTABLE STRICT PARALLEL SAFE AS $$
DECLARE
    b bigint;
    e integer;
    m bigint;
    v float8;
BEGIN
    IF t !~ '^f64:[0-9a-f]{16}$' THEN
        RETURN NULL;
    END IF;
    b := ('x' || substr(t, 5))::bit(64)::bigint;
    e := ((b >> 52) & 2047)::integer;
    m := b & 4503599627370495;  -- the 52 bits of the fraction
    IF e = 2047 THEN
        RETURN CASE WHEN m <> 0 THEN 'NaN'::float8
                    WHEN b < 0 THEN '-Infinity'::float8 ELSE 'Infinity'::float8 END;
    END IF;
    -- every step is exact: an integer below 2^53 times a power of two
    IF e = 0 THEN
        v := m::float8 * power(2::float8, -1074);
    ELSE
        v := (4503599627370496 + m)::float8 * power(2::float8, e - 1075);
    END IF;
    RETURN CASE WHEN b < 0 THEN -v ELSE v END;
END $$;

-- One row per incident the fleet holds (deleted ones leave). Text columns sort byte by byte,
-- as the bench's SQLite does, whatever the database's locale.
CREATE TABLE fleet_facts (
    id                text PRIMARY KEY,
    origin            text NOT NULL,
    owner             text NOT NULL,
    ord               bigint,            -- place in the order of creation (fleet_incident_order)
    reference         text COLLATE "C" NOT NULL,
    found_on          text COLLATE "C" NOT NULL,
    asset             text COLLATE "C",
    position          text NOT NULL,
    site              text COLLATE "C",
    product           text COLLATE "C",
    supplier          text COLLATE "C",
    lot               text COLLATE "C",
    status            text COLLATE "C" NOT NULL,
    cause             text COLLATE "C",
    origin_type       text COLLATE "C",
    temper            text COLLATE "C",
    stress_pa         float8,
    applied_stress_pa float8
);
CREATE INDEX fleet_facts_found ON fleet_facts (found_on, ord);
CREATE INDEX fleet_facts_owner ON fleet_facts (owner, found_on, ord);
CREATE INDEX fleet_facts_status ON fleet_facts (status, found_on, ord);
CREATE INDEX fleet_facts_cause ON fleet_facts (cause, found_on, ord);
CREATE INDEX fleet_facts_supplier ON fleet_facts (supplier, found_on, ord);
CREATE INDEX fleet_facts_lot ON fleet_facts (lot, found_on, ord);
CREATE INDEX fleet_facts_site ON fleet_facts (site, found_on, ord);
CREATE INDEX fleet_facts_stress ON fleet_facts (stress_pa, ord);
CREATE UNIQUE INDEX fleet_facts_reference ON fleet_facts (reference);
CREATE INDEX fleet_facts_ord ON fleet_facts (ord);

-- The words of each incident the bench's text search covers (search_body), for @@ queries.
CREATE TABLE fleet_search (
    id  text PRIMARY KEY,
    doc tsvector NOT NULL
);
CREATE INDEX fleet_search_doc ON fleet_search USING gin (doc);

-- Each incident's place in the order the benches created them: a bench's own order (its
-- chain's order, and within a bulk-load row the order it lists), numbered fleet-wide in the
-- order the fleet witnessed them.
CREATE TABLE fleet_incident_order (
    id    text PRIMARY KEY,
    bench text NOT NULL,
    ord   bigint NOT NULL UNIQUE
);

-- The facts of the incidents among fleet_records' rows, worked out from their images.
CREATE VIEW fleet_facts_source AS
    SELECT r.id, r.origin, r.owner, o.ord, r.reference,
           j->>'found_on' AS found_on,
           j->>'asset' AS asset,
           coalesce(j->>'position', '') AS position,
           j->>'site' AS site,
           j->'glass'->>'product' AS product,
           j->'glass'->>'supplier' AS supplier,
           j->'glass'->>'lot' AS lot,
           coalesce(j->>'status', '') AS status,
           CASE WHEN jsonb_typeof(j->'cause') = 'object' THEN j->'cause'->>'category' END AS cause,
           coalesce(cur->>'origin_type',
                    (SELECT e->>'origin_type'
                     FROM jsonb_array_elements(CASE WHEN jsonb_typeof(j->'examinations') = 'array'
                                                    THEN j->'examinations' ELSE '[]' END)
                          WITH ORDINALITY x(e, k)
                     WHERE e->>'origin_type' IS NOT NULL ORDER BY k DESC LIMIT 1)) AS origin_type,
           j->'glass'->'plies'->0->>'temper' AS temper,
           fleet_f64(cur->'result'->>'stress_pa') AS stress_pa,
           fleet_f64(cur->'result'->>'applied_stress_pa') AS applied_stress_pa,
           to_tsvector('simple', concat_ws(' ', j->>'reference', r.reference, j->>'position',
               j->>'description', j->>'notes', j->>'asset', j->>'reporter', j->>'how_found',
               j->'cause'->>'note',
               (SELECT string_agg(f, ' ') FROM jsonb_array_elements_text(
                   CASE WHEN jsonb_typeof(j->'cause'->'factors') = 'array'
                        THEN j->'cause'->'factors' ELSE '[]' END) f),
               (SELECT string_agg(e->>'notes', ' ') FROM jsonb_array_elements(
                   CASE WHEN jsonb_typeof(j->'examinations') = 'array'
                        THEN j->'examinations' ELSE '[]' END) e),
               (SELECT string_agg(c->>'note', ' ') FROM jsonb_array_elements(
                   CASE WHEN jsonb_typeof(j->'custody') = 'array'
                        THEN j->'custody' ELSE '[]' END) c),
               (SELECT string_agg(a->>'caption', ' ') FROM jsonb_array_elements(
                   CASE WHEN jsonb_typeof(j->'attachments') = 'array'
                        THEN j->'attachments' ELSE '[]' END) a))) AS doc
    FROM fleet_records r
    -- jsonb holds no NUL character: an escaped one (a note may carry it) is read as the
    -- symbol that shows it
    CROSS JOIN LATERAL (SELECT replace(r.image, '\u0000', '\u2400')::jsonb AS j OFFSET 0) img
    -- the examination whose result counts: the last one with a result
    LEFT JOIN LATERAL (
        SELECT e AS cur
        FROM jsonb_array_elements(CASE WHEN jsonb_typeof(j->'examinations') = 'array'
                                       THEN j->'examinations' ELSE '[]' END)
             WITH ORDINALITY x(e, k)
        WHERE jsonb_typeof(e->'result') = 'object'
        ORDER BY k DESC LIMIT 1
    ) c ON true
    LEFT JOIN fleet_incident_order o ON o.id = r.id
    WHERE r.entity = 'incident' AND r.image IS NOT NULL AND r.image <> ''
      AND j->>'found_on' IS NOT NULL;

-- The facts and words of these incidents made again from fleet_records.
CREATE FUNCTION fleet_refresh_facts(p_ids text[]) RETURNS void
LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $$
BEGIN
    DELETE FROM fleet_facts WHERE id = ANY (p_ids);
    DELETE FROM fleet_search WHERE id = ANY (p_ids);
    CREATE TEMP TABLE fleet_facts_new ON COMMIT DROP AS
        SELECT * FROM fleet_facts_source WHERE id = ANY (p_ids);
    INSERT INTO fleet_facts (id, origin, owner, ord, reference, found_on, asset, position, site,
                             product, supplier, lot, status, cause, origin_type, temper,
                             stress_pa, applied_stress_pa)
        SELECT id, origin, owner, ord, reference, found_on, asset, position, site, product,
               supplier, lot, status, cause, origin_type, temper, stress_pa, applied_stress_pa
        FROM fleet_facts_new;
    INSERT INTO fleet_search (id, doc) SELECT id, doc FROM fleet_facts_new;
    DROP TABLE fleet_facts_new;
END $$;

CREATE FUNCTION fleet_records_changed() RETURNS trigger
LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $$
DECLARE
    v_ids text[];
BEGIN
    SELECT array_agg(n.id) INTO v_ids FROM changed_rows n WHERE n.entity = 'incident';
    IF v_ids IS NOT NULL THEN
        PERFORM fleet_refresh_facts(v_ids);
    END IF;
    RETURN NULL;
END $$;
CREATE TRIGGER fleet_records_inserted AFTER INSERT ON fleet_records
    REFERENCING NEW TABLE AS changed_rows
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_records_changed();
CREATE TRIGGER fleet_records_updated AFTER UPDATE ON fleet_records
    REFERENCING NEW TABLE AS changed_rows
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_records_changed();

-- The incidents the new chain rows created, in the bench's order: a row inserting one, or a
-- bulk-load row listing many (in its order). Rows a pull wrote came from the fleet.
CREATE FUNCTION fleet_order_rows(p_bench text, p_seq bigint, p_entity text, p_entity_id text,
                                 p_op text, p_actor text, p_after text)
RETURNS TABLE (id text, pos bigint)
LANGUAGE sql IMMUTABLE PARALLEL SAFE AS $$
    SELECT p_entity_id, 0::bigint
    WHERE p_entity = 'incident' AND p_op = 'insert' AND p_actor <> 'fleet:pull'
    UNION ALL
    SELECT r.item->>0, r.pos
    FROM (SELECT p_after::jsonb AS j WHERE p_entity = 'batch' AND p_actor <> 'fleet:pull'
          AND p_after IS NOT NULL) m
    CROSS JOIN LATERAL jsonb_array_elements(CASE WHEN m.j->>'entity' = 'incident'
                                                 AND jsonb_typeof(m.j->'records') = 'array'
                                                 THEN m.j->'records' ELSE '[]' END)
         WITH ORDINALITY r(item, pos)
$$;

CREATE FUNCTION fleet_chain_added() RETURNS trigger
LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $$
DECLARE
    v_base bigint;
BEGIN
    SELECT coalesce(max(o.ord), 0) INTO v_base FROM fleet_incident_order o;
    WITH made AS (
        SELECT n.bench, x.id, n.seq, x.pos
        FROM added_rows n
        CROSS JOIN LATERAL fleet_order_rows(n.bench, n.seq, n.entity, n.entity_id, n.op,
                                            n.actor, n.after) x
        WHERE n.entity IN ('incident', 'batch') AND x.id IS NOT NULL
    ), fresh AS (
        SELECT DISTINCT ON (m.id) m.* FROM made m
        WHERE NOT EXISTS (SELECT 1 FROM fleet_incident_order o WHERE o.id = m.id)
        ORDER BY m.id, m.seq, m.pos
    ), numbered AS (
        INSERT INTO fleet_incident_order (id, bench, ord)
            SELECT f.id, f.bench, v_base + row_number() OVER (ORDER BY f.seq, f.pos)
            FROM fresh f
        RETURNING id, ord
    )
    UPDATE fleet_facts t SET ord = n.ord FROM numbered n WHERE t.id = n.id;
    RETURN NULL;
END $$;
CREATE TRIGGER bench_chain_added AFTER INSERT ON bench_chain
    REFERENCING NEW TABLE AS added_rows
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_chain_added();

-- What a fleet already held before this migration.
INSERT INTO fleet_incident_order (id, bench, ord)
    SELECT f.id, f.bench, row_number() OVER (ORDER BY f.bench, f.seq, f.pos)
    FROM (SELECT DISTINCT ON (x.id) c.bench, x.id, c.seq, x.pos
          FROM bench_chain c
          CROSS JOIN LATERAL fleet_order_rows(c.bench, c.seq, c.entity, c.entity_id, c.op,
                                              c.actor, c.after) x
          WHERE c.entity IN ('incident', 'batch') AND x.id IS NOT NULL
          ORDER BY x.id, c.seq, x.pos) f;
SELECT fleet_refresh_facts(coalesce(array_agg(id), '{}')) FROM fleet_records
    WHERE entity = 'incident';
