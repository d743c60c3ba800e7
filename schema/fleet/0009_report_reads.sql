-- shardlog fleet schema 9: what reports and dispute bundles read on the fleet. An incident's
-- history (its rows in the witnessed chains) and the revisions of the benches' own materials
-- are found by entity and record id, without reading every witnessed row.
CREATE INDEX bench_chain_entity ON bench_chain (entity, entity_id);
