//! Synthetic incident rows shared by the import benchmarks: the values the CSV and the
//! plain inserts both use.

use chrono::NaiveDate;

/// The columns of [`csv`], in order.
pub const HEADER: &str = "found_on,site,asset,position,supplier,product,lot,makeup,material,temper,thickness,status,origin_location,origin_type,analyst,mirror_mist,mist_hackle,cause,confidence,responsibility,description";

/// One synthetic incident row.
pub struct Row {
    pub found_on: String,
    pub asset: String,
    pub position: String,
    pub lot: String,
    pub readings: [(&'static str, String); 3],
    pub description: String,
}

pub fn row(i: usize) -> Row {
    let start = NaiveDate::from_ymd_opt(2024, 1, 1).unwrap();
    let d = start + chrono::Days::new((i % 1000) as u64);
    Row {
        found_on: d.to_string(),
        asset: format!("car {}", 100 + i % 300),
        // unique per row: the import refuses a second incident on the same asset, position
        // and date as a possible duplicate
        position: format!("left side bay {} pane {i}", i % 8),
        lot: format!("OS-22{:02}", i % 12),
        readings: [
            ("mirror_mist", format!("0.{:02} mm", 40 + i % 50)),
            ("mirror_mist", format!("0.{:02} mm", 41 + i % 50)),
            ("mist_hackle", format!("0.{:02} mm", 55 + i % 40)),
        ],
        description: format!("crack from the edge number {i}"),
    }
}

/// `n` rows as the CSV an analyst would import (no references: the import numbers them).
pub fn csv(n: usize) -> Vec<u8> {
    let mut s = String::from(HEADER);
    s.push('\n');
    for i in 0..n {
        let r = row(i);
        s.push_str(&format!(
            "{},TVL-CEN,{},{},ORVALE,SW6-FT,{},monolithic,soda_lime,fully_tempered,6 mm,cause_assigned,edge,edge_chip,mira,{}; {},{},thermal,probable,undetermined,{}\n",
            r.found_on, r.asset, r.position, r.lot, r.readings[0].1, r.readings[1].1, r.readings[2].1, r.description
        ));
    }
    s.into_bytes()
}
