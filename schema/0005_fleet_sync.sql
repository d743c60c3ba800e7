-- shardlog schema (fleet sync): the receipts the fleet database returned for this bench's
-- pushes. Each names the fleet's chain link (sequence and hash) and the last row of this
-- bench's audit chain it witnessed; `verify --fleet` checks them against the fleet. The bench
-- code itself is kept in meta ('bench_code'). Receipts are not audited: like the text index
-- they describe the chain, they are not records of it.

CREATE TABLE fleet_receipts (
    fleet_seq   INTEGER PRIMARY KEY,
    fleet_hash  TEXT NOT NULL,
    bench_seq   INTEGER NOT NULL,
    bench_hash  TEXT NOT NULL,
    received_at TEXT NOT NULL
) STRICT;
