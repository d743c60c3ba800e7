//! The incident log: one page of rows in memory (the visible ones), paged from the store
//! with keyset cursors in either direction, sorted and filtered by the store.

use crate::store::model::{Cursor, Filter, LogRow, PageRequest, Sort, SortColumn};
use crate::store::{RecordSource, StoreError};

/// The log's state. `rows` holds only what the screen shows.
#[derive(Debug, Default)]
pub struct LogState {
    pub filter: Filter,
    pub sort: Sort,
    pub rows: Vec<LogRow>,
    /// Index into `rows`.
    pub selected: usize,
    /// Rows per page (the visible height of the table).
    pub page_size: usize,
    /// Whether pages are fetched in the opposite order of the sort and shown reversed
    /// (after End: the last page first).
    flipped: bool,
    /// Cursor each page seen so far started after (in query order), to page back.
    starts: Vec<Option<Cursor>>,
    /// Where the current page started.
    current_start: Option<Cursor>,
    /// Where the current page ended (None: no more in query order).
    next: Option<Cursor>,
    /// Matching incidents (counted when the filter changes).
    pub total: Option<u64>,
    /// More than `total` match: the count stopped at its cap (a filter by status or words).
    pub more_than_total: bool,
    /// The filter `total` counted.
    counted: Option<Filter>,
    /// The count is out of date: it is taken after the next frame is drawn, so a new page
    /// never waits for a count over a large table.
    pub count_pending: bool,
    /// Number of rows before the first shown row, when known (for "rows 41–60 of 1,000").
    pub offset: Option<u64>,
}

fn reversed(s: Sort) -> Sort {
    Sort {
        column: s.column,
        descending: !s.descending,
    }
}

impl LogState {
    pub fn new() -> Self {
        LogState {
            sort: Sort {
                column: SortColumn::Found,
                descending: true,
            },
            page_size: 20,
            offset: Some(0),
            ..Default::default()
        }
    }

    fn query_sort(&self) -> Sort {
        if self.flipped {
            reversed(self.sort)
        } else {
            self.sort
        }
    }

    fn fetch(
        &mut self,
        store: &dyn RecordSource,
        after: Option<Cursor>,
        count: bool,
    ) -> Result<bool, StoreError> {
        let page = store.list(
            &self.filter,
            self.query_sort(),
            &PageRequest {
                limit: self.page_size.max(1) as u32,
                after: after.clone(),
                with_total: count,
            },
        )?;
        if page.rows.is_empty() && after.is_some() {
            return Ok(false);
        }
        let mut rows = page.rows;
        if self.flipped {
            rows.reverse();
        }
        self.rows = rows;
        self.current_start = after;
        self.next = page.next;
        if count {
            self.total = page.total;
            self.more_than_total = page.more_than_total;
        }
        Ok(true)
    }

    /// Load the first page (after a filter, sort or size change); the count follows.
    pub fn reload(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        self.flipped = false;
        self.starts.clear();
        self.selected = 0;
        self.offset = Some(0);
        self.total = None;
        self.more_than_total = false;
        self.fetch(store, None, false)?;
        self.count_pending = true;
        Ok(())
    }

    /// Load the first page in another sort order. The matches are the same ones, so a count
    /// already taken stays (on a large fleet a new count is a read the key need not wait for).
    pub fn resort(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        let same = !self.count_pending && self.counted.as_ref() == Some(&self.filter);
        let kept = same.then_some((self.total, self.more_than_total));
        self.reload(store)?;
        if let Some((Some(total), more)) = kept {
            self.total = Some(total);
            self.more_than_total = more;
            self.count_pending = false;
        }
        Ok(())
    }

    /// Reload the page being shown (after an edit), keeping the selection where possible;
    /// the count follows.
    pub fn refresh(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        let keep = self.selected;
        let start = self.current_start.clone();
        self.fetch(store, start, false)?;
        self.selected = keep.min(self.rows.len().saturating_sub(1));
        self.count_pending = true;
        Ok(())
    }

    /// Count the matching incidents (deferred work after a frame).
    pub fn count(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        let page = store.list(
            &self.filter,
            self.sort,
            &PageRequest {
                limit: 1,
                after: None,
                with_total: true,
            },
        )?;
        self.total = page.total;
        self.more_than_total = page.more_than_total;
        self.counted = Some(self.filter.clone());
        self.count_pending = false;
        if self.flipped && self.starts.is_empty() {
            self.offset = self
                .exact_total()
                .map(|t| t.saturating_sub(self.rows.len() as u64));
        }
        Ok(())
    }

    /// The count of matches when it is exact (not cut at its cap).
    fn exact_total(&self) -> Option<u64> {
        self.total.filter(|_| !self.more_than_total)
    }

    pub fn selected_row(&self) -> Option<&LogRow> {
        self.rows.get(self.selected)
    }

    /// Page forward in query order. Returns false at the end.
    fn query_forward(&mut self, store: &dyn RecordSource) -> Result<bool, StoreError> {
        let Some(next) = self.next.clone() else {
            return Ok(false);
        };
        let prev_start = self.current_start.clone();
        if self.fetch(store, Some(next), false)? {
            self.starts.push(prev_start);
            Ok(true)
        } else {
            self.next = None;
            Ok(false)
        }
    }

    /// Page back in query order. Returns false at the start.
    fn query_back(&mut self, store: &dyn RecordSource) -> Result<bool, StoreError> {
        let Some(start) = self.starts.pop() else {
            return Ok(false);
        };
        self.fetch(store, start, false)?;
        Ok(true)
    }

    /// Next page down the screen.
    pub fn page_down(&mut self, store: &dyn RecordSource) -> Result<bool, StoreError> {
        let len = self.rows.len() as u64;
        let moved = if self.flipped {
            self.query_back(store)?
        } else {
            self.query_forward(store)?
        };
        if moved {
            self.offset = self.offset.map(|o| o + len);
        }
        Ok(moved)
    }

    /// Next page up the screen.
    pub fn page_up(&mut self, store: &dyn RecordSource) -> Result<bool, StoreError> {
        let moved = if self.flipped {
            self.query_forward(store)?
        } else {
            self.query_back(store)?
        };
        if moved {
            let len = self.rows.len() as u64;
            self.offset = self.offset.map(|o| o.saturating_sub(len));
        }
        Ok(moved)
    }

    pub fn down(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        if self.selected + 1 < self.rows.len() {
            self.selected += 1;
        } else if self.page_down(store)? {
            self.selected = 0;
        }
        Ok(())
    }

    pub fn up(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        if self.selected > 0 {
            self.selected -= 1;
        } else if self.page_up(store)? {
            self.selected = self.rows.len().saturating_sub(1);
        }
        Ok(())
    }

    pub fn pg_down(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        if !self.page_down(store)? {
            self.selected = self.rows.len().saturating_sub(1);
        }
        Ok(())
    }

    pub fn pg_up(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        if !self.page_up(store)? {
            self.selected = 0;
        }
        Ok(())
    }

    /// The first page, first row (the count stays: nothing changed but the position).
    pub fn home(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        self.flipped = false;
        self.starts.clear();
        self.selected = 0;
        self.offset = Some(0);
        self.fetch(store, None, false)?;
        Ok(())
    }

    /// The last page, last row: fetched with the sort reversed and shown the right way up.
    pub fn end(&mut self, store: &dyn RecordSource) -> Result<(), StoreError> {
        self.flipped = true;
        self.starts.clear();
        self.fetch(store, None, false)?;
        self.selected = self.rows.len().saturating_sub(1);
        self.offset = self
            .exact_total()
            .map(|t| t.saturating_sub(self.rows.len() as u64));
        Ok(())
    }

    /// Change the number of rows per page; reloads from the current first row's page.
    pub fn set_page_size(
        &mut self,
        n: usize,
        store: Option<&dyn RecordSource>,
    ) -> Result<(), StoreError> {
        let n = n.max(1);
        if n == self.page_size {
            return Ok(());
        }
        self.page_size = n;
        if let Some(s) = store {
            let keep = self.selected;
            let start = self.current_start.clone();
            self.fetch(s, start, false)?;
            self.selected = keep.min(self.rows.len().saturating_sub(1));
        }
        Ok(())
    }

    /// Cycle the sort column: found → reference → stress → status.
    pub fn next_sort(&mut self) {
        self.sort.column = match self.sort.column {
            SortColumn::Found => SortColumn::Reference,
            SortColumn::Reference => SortColumn::Stress,
            SortColumn::Stress => SortColumn::Status,
            SortColumn::Status => SortColumn::Found,
        };
    }

    pub fn reverse_sort(&mut self) {
        self.sort.descending = !self.sort.descending;
    }

    /// [`LogState::filter_summary`] in at most `width` cells when it can be: the dates as one
    /// range, then each value shortened with "…" in turn (the dates are never cut).
    pub fn filter_summary_within(&self, lists: &super::incident::Lists, width: usize) -> String {
        use shardlog_core::text::{fit, width as cells};
        let full = self.filter_summary(lists);
        if cells(&full) <= width {
            return full;
        }
        let undated = Filter {
            since: None,
            until: None,
            ..self.filter.clone()
        };
        let values = summary_of(&undated, lists);
        let dates = match (self.filter.since, self.filter.until) {
            (Some(a), Some(b)) => Some(format!("{a} to {b}")),
            (Some(a), None) => Some(format!("since {a}")),
            (None, Some(b)) => Some(format!("until {b}")),
            (None, None) => None,
        };
        let join = |s: &str| match &dates {
            Some(d) if s.is_empty() => d.clone(),
            Some(d) => format!("{s}, {d}"),
            None => s.to_string(),
        };
        let mut short = values.clone();
        let mut limit = 24usize;
        while cells(&join(&short)) > width && limit > 6 {
            short = values
                .split(", ")
                .map(|p| fit(p, limit))
                .collect::<Vec<_>>()
                .join(", ");
            limit -= 2;
        }
        join(&short)
    }

    /// Words for the status line: what is filtered (lookup codes shown by their labels).
    pub fn filter_summary(&self, lists: &super::incident::Lists) -> String {
        summary_of(&self.filter, lists)
    }
    pub fn sort_label(&self) -> String {
        let col = match self.sort.column {
            SortColumn::Found => "date found",
            SortColumn::Reference => "reference",
            SortColumn::Stress => "net stress",
            SortColumn::Status => "status",
        };
        let dir = if self.sort.descending {
            "descending"
        } else {
            "ascending"
        };
        format!("{col} {dir}")
    }
}

/// Words for a filter: what is filtered (lookup codes shown by their labels).
fn summary_of(f: &Filter, lists: &super::incident::Lists) -> String {
    use crate::store::model::LookupKind;

    let mut parts = Vec::new();
    let mut add = |k: &str, v: &Option<String>, kind: Option<LookupKind>| {
        if let Some(v) = v {
            let shown = match kind {
                Some(kind) => lists.label(kind, v),
                None => v.clone(),
            };
            parts.push(format!("{k} {shown}"));
        }
    };
    add("status", &f.status, Some(LookupKind::Status));
    if f.cause.as_deref() == Some(crate::store::model::NO_CAUSE) {
        add("cause", &Some("none".into()), None);
    } else {
        add("cause", &f.cause, Some(LookupKind::CauseCategory));
    }
    add("origin", &f.origin_type, Some(LookupKind::OriginType));
    add("supplier", &f.supplier, None);
    add("lot", &f.lot, None);
    add("site", &f.site, None);
    add("bench", &f.bench, None);
    if let Some(d) = f.since {
        parts.push(format!("since {d}"));
    }
    if let Some(d) = f.until {
        parts.push(format!("until {d}"));
    }
    if let Some(t) = &f.text {
        parts.push(format!("text \"{t}\""));
    }
    parts.join(", ")
}
