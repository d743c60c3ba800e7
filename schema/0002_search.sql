-- shardlog schema 2: free-text search (SQLite FTS5; PostgreSQL would use tsvector).
-- rowid = incidents.seq. Kept in step by the store on every incident write.
CREATE VIRTUAL TABLE incident_text USING fts5 (body, tokenize = 'unicode61 remove_diacritics 2');
