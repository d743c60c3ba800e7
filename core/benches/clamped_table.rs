//! Prints the rows of core/src/loads/clamped_table.rs: the clamped plate's series at each
//! tabulated aspect ratio (`clamped::table_row`). Run: `cargo bench -p shardlog-core --bench
//! clamped_table`; paste the rows between the TABLE-START and TABLE-END markers.

use shardlog_core::loads::clamped::table_row;
use shardlog_core::loads::clamped_table::{ROWS, STEP};

fn main() {
    for k in 0..ROWS {
        let ratio = 1.0 + k as f64 * STEP;
        let row = table_row(ratio);
        let cells: Vec<String> = row.iter().map(|v| format!("{v:.13e}")).collect();
        println!("    // b/a {ratio:.1}");
        for (k, four) in cells.chunks(4).enumerate() {
            let open = if k == 0 { "[" } else { " " };
            let close = if k == 2 { "]," } else { "," };
            println!("    {open}{}{close}", four.join(", "));
        }
    }
}
