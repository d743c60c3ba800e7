-- shardlog schema 4: the text index keeps only the index, not a second copy of the text.
-- Schema 2's table also stored every searchable text (descriptions, notes, …) beside the
-- incidents that already hold it; a contentless FTS5 table (content = '') indexes the same
-- words under the same row numbers (rowid = incidents.seq), and contentless_delete = 1 lets
-- the store delete and replace an incident's entry as before. Searches are unchanged: they
-- only ask the index which rows match. The index is rebuilt here from the old table's copy.
CREATE VIRTUAL TABLE incident_text_4 USING fts5 (
    body,
    content = '',
    contentless_delete = 1,
    tokenize = 'unicode61 remove_diacritics 2'
);
INSERT INTO incident_text_4 (rowid, body) SELECT rowid, body FROM incident_text ORDER BY rowid;
DROP TABLE incident_text;
ALTER TABLE incident_text_4 RENAME TO incident_text;
