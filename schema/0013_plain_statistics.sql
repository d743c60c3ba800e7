-- shardlog schema (plain planner statistics): the query planner keeps the row counts of
-- `ANALYZE` (sqlite_stat1) and not its samples of key values (sqlite_stat4). With samples,
-- SQLite prepares a statement again whenever the key bound to it changes, and reading an
-- incident runs a handful of statements with a new key each: an export, a report or a verify
-- of many incidents spent most of its time preparing statements. The bulk paths (demo, large
-- imports) drop the samples after their ANALYZE too. Statistics only: no record changes.

DROP TABLE IF EXISTS sqlite_stat4;
