//! The count of matches under the log's first page on the fleet database when the counts by
//! month cannot give it (a status or words to search): the matching facts read up to the cap
//! ([`crate::store::COUNT_CAP`]) and one more, never all of them (millions on a large fleet).
//! A bench file counts the same way ([`Filter::count_is_capped`]), so that both say "more
//! than 1000" alike.

use super::read::{pg, refs, text_query, where_clause, Bound, FleetReader};
use crate::store::model::{count_cap, Filter};
use crate::store::StoreError;

impl FleetReader {
    /// The matches of `filter` (its conditions `conds` on `fleet_facts f` with their values
    /// `args`) counted up to the cap when its count is capped, else all of them.
    pub(super) fn capped_total(
        &self,
        client: &mut impl postgres::GenericClient,
        filter: &Filter,
        conds: &[String],
        args: &[Bound],
    ) -> Result<u64, StoreError> {
        let words_only = Filter {
            text: None,
            ..filter.clone()
        } == Filter::default();
        if let (true, None, Some(text)) = (words_only, self.scope(), filter.text.as_deref()) {
            // words alone over every bench: the text table answers by itself (it holds one
            // row for each incident of the facts, written with it)
            let Some(q) = text_query(text) else {
                return Ok(0);
            };
            let cap = i64::try_from(count_cap().saturating_add(1)).unwrap_or(i64::MAX);
            let n: i64 = client
                .query_one(
                    "SELECT count(*) FROM (SELECT 1 FROM fleet_search s
                     WHERE s.doc @@ to_tsquery('simple', $1) LIMIT $2) x",
                    &[&q, &cap],
                )
                .map_err(pg)?
                .get(0);
            return Ok(n.unsigned_abs());
        }
        let sql = if filter.count_is_capped() {
            format!(
                "SELECT count(*) FROM (SELECT 1 FROM fleet_facts f {} LIMIT {}) x",
                where_clause(conds),
                count_cap() + 1
            )
        } else {
            format!("SELECT count(*) FROM fleet_facts f {}", where_clause(conds))
        };
        let n: i64 = client.query_one(&sql, &refs(args)).map_err(pg)?.get(0);
        Ok(n.unsigned_abs())
    }
}
