-- shardlog fleet schema 1 (PostgreSQL 15 or later): the benches' witnessed histories, the
-- records they describe, the fleet's own chain of accepted pushes (the receipts), refusals and
-- conflicts. Bench history and receipts are append-only: triggers refuse UPDATE and DELETE to
-- everyone, the owner included; the bench role may add only through fleet_push().
-- Canonical texts and hashes are those of the bench (docs/notes.md, "The audit chain"):
-- hash = SHA-256(previous hash as 32 bytes || canonical row as UTF-8), lower-case hex.

CREATE TABLE fleet_schema (
    version    integer PRIMARY KEY,
    name       text NOT NULL,
    applied_at timestamptz NOT NULL DEFAULT now()
);

-- One row per bench that ever pushed: its code and the head of its chain the fleet witnessed.
CREATE TABLE fleet_benches (
    code        text PRIMARY KEY CHECK (code ~ '^[A-Z][A-Z0-9]{1,7}$'),
    first_push  timestamptz NOT NULL DEFAULT now(),
    head_seq    bigint NOT NULL DEFAULT 0,
    head_hash   text NOT NULL DEFAULT repeat('0', 64),
    last_sync   timestamptz
);

-- Every audit row a bench pushed and the fleet checked, exactly as the bench wrote it.
CREATE TABLE bench_chain (
    bench     text NOT NULL REFERENCES fleet_benches (code),
    seq       bigint NOT NULL CHECK (seq >= 1),
    at        text NOT NULL,
    actor     text NOT NULL,
    entity    text NOT NULL,
    entity_id text NOT NULL,
    op        text NOT NULL CHECK (op IN ('insert', 'update', 'delete')),
    before    text,
    after     text,
    prev_hash text NOT NULL,
    hash      text NOT NULL,
    fleet_seq bigint NOT NULL,
    PRIMARY KEY (bench, seq)
);

-- The fleet's own chain: one link per accepted push, returned to the bench as its receipt.
CREATE TABLE fleet_receipts (
    fleet_seq  bigint PRIMARY KEY CHECK (fleet_seq >= 1),
    at         text NOT NULL,        -- RFC 3339 UTC with milliseconds, as hashed
    bench      text NOT NULL REFERENCES fleet_benches (code),
    from_seq   bigint NOT NULL,
    to_seq     bigint NOT NULL,
    bench_hash text NOT NULL,
    records    bigint NOT NULL,
    prev_hash  text NOT NULL,
    hash       text NOT NULL UNIQUE
);

-- The current image of every record the benches described (canonical JSON text, exactly as
-- the bench's chain pins it). Lookup entries are keyed by their code, the same at every bench,
-- so they are kept per origin; every other record has a UUIDv7 key, unique in the fleet.
CREATE TABLE fleet_records (
    entity     text NOT NULL,
    id         text NOT NULL,
    origin     text NOT NULL REFERENCES fleet_benches (code),
    owner      text NOT NULL REFERENCES fleet_benches (code),
    image      text,             -- NULL once the owner deleted it
    digest     text,             -- SHA-256 (hex) of image
    reference  text,             -- incidents: the reference, qualified by the bench when it lacks one
    bench_seq  bigint NOT NULL,  -- the owner's chain row that made this image
    fleet_seq  bigint NOT NULL,  -- the receipt that accepted it
    PRIMARY KEY (entity, id, origin)
);
CREATE UNIQUE INDEX fleet_records_key ON fleet_records (entity, id) WHERE entity <> 'lookup';
CREATE UNIQUE INDEX fleet_records_reference ON fleet_records (reference) WHERE reference IS NOT NULL;
CREATE INDEX fleet_records_pull ON fleet_records (fleet_seq);

-- Attachments by content hash, checked on arrival.
CREATE TABLE fleet_files (
    sha256 text PRIMARY KEY CHECK (sha256 ~ '^[0-9a-f]{64}$'),
    bytes  bytea NOT NULL,
    CHECK (encode(sha256(bytes), 'hex') = sha256)
);

-- Pushes the fleet refused (a fork, a broken link, a collision): nothing of them was applied.
CREATE TABLE fleet_refusals (
    id              bigserial PRIMARY KEY,
    at              timestamptz NOT NULL DEFAULT now(),
    bench           text NOT NULL,
    kind            text NOT NULL,
    seq             bigint,
    pushed_hash     text,
    witnessed_hash  text,
    detail          text NOT NULL
);

-- An edit the fleet did not apply (from a bench that does not own the record, or made on a
-- version the fleet has moved past): both versions are kept until the owner settles it.
CREATE TABLE fleet_conflicts (
    id           bigserial PRIMARY KEY,
    opened_at    timestamptz NOT NULL DEFAULT now(),
    entity       text NOT NULL,
    record_id    text NOT NULL,
    bench        text NOT NULL,
    bench_seq    bigint NOT NULL,
    fleet_image  text,
    bench_image  text,
    resolved_at  timestamptz,
    resolved_seq bigint
);

-- What a push hands to fleet_push() inside its own transaction (the push column is that
-- transaction's id: pushes never see each other's rows, and a push that dies leaves none).
CREATE UNLOGGED TABLE push_entries (
    push      bigint NOT NULL DEFAULT txid_current(),
    seq       bigint NOT NULL,
    at        text NOT NULL,
    actor     text NOT NULL,
    entity    text NOT NULL,
    entity_id text NOT NULL,
    op        text NOT NULL,
    before    text,
    after     text,
    prev_hash text NOT NULL,
    hash      text NOT NULL
);
CREATE INDEX push_entries_push ON push_entries (push, seq);

CREATE UNLOGGED TABLE push_records (
    push   bigint NOT NULL DEFAULT txid_current(),
    entity text NOT NULL,
    id     text NOT NULL,
    image  text NOT NULL
);
CREATE INDEX push_records_push ON push_records (push, entity, id);

CREATE UNLOGGED TABLE push_files (
    push   bigint NOT NULL DEFAULT txid_current(),
    sha256 text NOT NULL,
    bytes  bytea NOT NULL
);

-- History is never rewritten, not even by the fleet's owner.
CREATE FUNCTION fleet_refuse_change() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'fleet history is append-only: % on % refused', TG_OP, TG_TABLE_NAME
        USING ERRCODE = 'insufficient_privilege';
END $$;
CREATE TRIGGER bench_chain_append_only BEFORE UPDATE OR DELETE OR TRUNCATE ON bench_chain
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_refuse_change();
CREATE TRIGGER fleet_receipts_append_only BEFORE UPDATE OR DELETE OR TRUNCATE ON fleet_receipts
    FOR EACH STATEMENT EXECUTE FUNCTION fleet_refuse_change();

-- The canonical text of one audit row (the bench's AuditRow::canonical): a JSON object with
-- sorted keys; to_json escapes text as the bench does (\" \\ \b \f \n \r \t, \u00XX below 0x20).
CREATE FUNCTION fleet_row_text(seq bigint, at text, actor text, entity text, entity_id text,
                               op text, before text, after text) RETURNS text
LANGUAGE sql IMMUTABLE PARALLEL SAFE AS $$
    SELECT '{"actor":' || to_json(actor)::text
        || ',"after":' || coalesce(to_json(after)::text, 'null')
        || ',"at":' || to_json(at)::text
        || ',"before":' || coalesce(to_json(before)::text, 'null')
        || ',"entity":' || to_json(entity)::text
        || ',"entity_id":' || to_json(entity_id)::text
        || ',"op":' || to_json(op)::text
        || ',"seq":' || seq::text || '}'
$$;

CREATE FUNCTION fleet_link_hash(prev_hash text, body text) RETURNS text
LANGUAGE sql IMMUTABLE PARALLEL SAFE AS $$
    SELECT encode(sha256(decode(prev_hash, 'hex') || convert_to(body, 'UTF8')), 'hex')
$$;

-- The canonical text of a receipt (keys sorted), which its hash covers.
CREATE FUNCTION fleet_receipt_text(fleet_seq bigint, at text, bench text, from_seq bigint,
                                   to_seq bigint, bench_hash text, records bigint) RETURNS text
LANGUAGE sql IMMUTABLE PARALLEL SAFE AS $$
    SELECT '{"at":' || to_json(at)::text
        || ',"bench":' || to_json(bench)::text
        || ',"bench_hash":' || to_json(bench_hash)::text
        || ',"fleet_seq":' || fleet_seq::text
        || ',"from_seq":' || from_seq::text
        || ',"records":' || records::text
        || ',"to_seq":' || to_seq::text || '}'
$$;

-- A refused push: its staged rows go, the refusal stays (the caller commits it).
CREATE FUNCTION fleet_refuse(p_push bigint, p_bench text, p_kind text, p_seq bigint,
                             p_pushed text, p_witnessed text, p_detail text) RETURNS void
LANGUAGE plpgsql AS $$
BEGIN
    DELETE FROM push_entries WHERE push = p_push;
    DELETE FROM push_records WHERE push = p_push;
    DELETE FROM push_files WHERE push = p_push;
    INSERT INTO fleet_refusals (bench, kind, seq, pushed_hash, witnessed_hash, detail)
        VALUES (p_bench, p_kind, p_seq, p_pushed, p_witnessed, p_detail);
END $$;

-- An incident's reference as the fleet shows it: as the bench made it when it carries the
-- bench's code, else qualified by the code of the bench that made it ("NORTH/BR-260314-0007").
CREATE FUNCTION fleet_reference(origin text, image text) RETURNS text
LANGUAGE sql IMMUTABLE PARALLEL SAFE AS $$
    SELECT CASE WHEN r ~ '^BR-[0-9]{6}-[0-9]+$' THEN origin || '/' || r ELSE r END
    -- the key "reference" with its quotes can only stand as a key: inside a string value
    -- every quote is escaped
    FROM (SELECT split_part(split_part(image, '"reference":"', 2), '"', 1) AS r) x
$$;
