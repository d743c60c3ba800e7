//! The log's first pages read in process, from a bench file or the fleet database (issue 17's
//! goals at 10M: list first page < 50 ms, filtered by supplier < 50 ms, text search first page
//! < 100 ms). `scripts/bench-fleet` runs it on both and prints them beside each other.
//!
//!   cargo bench --bench fleet_read -- --db DB_OR_URL --supplier CODE --search WORD [--rounds 7]
//!
//! Each figure is the median of the rounds (after one unmeasured round that warms the caches),
//! for the page `shardlog list` asks first: 50 rows, newest first, with the count of matches.
//! One line per figure: `FIGURE <name> <median ms> <slowest ms>`.

use std::time::{Duration, Instant};

use shardlog::store::fleet::FleetReader;
use shardlog::store::{Filter, PageRequest, RecordSource, Sort, SortColumn, Store};

fn arg(name: &str) -> Option<String> {
    let args: Vec<String> = std::env::args().collect();
    args.iter()
        .position(|a| a == name)
        .and_then(|i| args.get(i + 1).cloned())
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1000.0
}

fn main() {
    let Some(db) = arg("--db") else {
        // `cargo test --benches` runs this without arguments: nothing to measure
        println!("fleet_read: give --db DB_OR_URL (see the file's head)");
        return;
    };
    let rounds: usize = arg("--rounds").and_then(|r| r.parse().ok()).unwrap_or(7);
    let source: Box<dyn RecordSource> = if db.starts_with("postgres") {
        Box::new(FleetReader::open(&db, None).expect("the fleet database opens"))
    } else {
        Box::new(Store::open_existing(std::path::Path::new(&db)).expect("the bench file opens"))
    };
    let newest = Sort {
        column: SortColumn::default(),
        descending: true,
    };
    let page = PageRequest {
        limit: 50,
        after: None,
        with_total: true,
    };
    let cases: Vec<(&str, Filter)> = vec![
        ("list_first_page", Filter::default()),
        (
            "list_by_supplier",
            Filter {
                supplier: arg("--supplier"),
                ..Filter::default()
            },
        ),
        (
            "text_search_first_page",
            Filter {
                text: arg("--search"),
                ..Filter::default()
            },
        ),
    ];
    for (name, filter) in cases {
        let mut times = Vec::new();
        let mut rows = 0;
        for k in 0..=rounds {
            let t = Instant::now();
            let p = source.list(&filter, newest, &page).expect("a page");
            let d = t.elapsed();
            rows = p.rows.len();
            if k > 0 {
                times.push(d);
            }
        }
        times.sort();
        println!(
            "FIGURE {name} {:.2} {:.2} ({rows} rows)",
            ms(times[times.len() / 2]),
            ms(times[times.len() - 1])
        );
    }
}
