//! Speed figures for the fleet statistics (issue 5). Run with
//! `cargo bench --bench fleet` (set SHARDLOG_BENCH_PYTHON to a python with scipy, else
//! `python3` is tried; without scipy the comparison is skipped and says so).
//!
//! 1. A Weibull fit of 100,000 values, against scipy's `weibull_min.fit(x, floc=0)` on the
//!    same values (the same file is handed to python).
//! 2. Grouping 1,000,000 incidents by cause and supplier with rates and a Weibull fit per
//!    group (the pure part of `stats --by cause,supplier --rates --weibull`).

use std::process::Command;
use std::time::Instant;

use chrono::NaiveDate;
use shardlog_core::fleet::weibull::fit_values;
use shardlog_core::fleet::{group, Exposure, GroupOptions, IncidentFacts, Key, Window};

struct Rng(u64);
impl Rng {
    fn next_f64(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

fn main() {
    let mut rng = Rng(2026);
    let x: Vec<f64> = (0..100_000)
        .map(|_| 80.0 * (-rng.next_f64().ln()).powf(1.0 / 7.5))
        .collect();
    let mut times = Vec::new();
    let mut last = None;
    for _ in 0..21 {
        let t = Instant::now();
        let f = fit_values(&x).expect("fit");
        times.push(t.elapsed().as_secs_f64());
        last = Some(f);
    }
    let f = last.expect("fit");
    let ours = median(times);
    println!(
        "weibull fit, 100,000 values: {:.2} ms (median of 21), m = {:.6}, scale = {:.6}, {} iterations",
        ours * 1e3,
        f.modulus,
        f.scale,
        f.iterations
    );

    let dir = std::env::temp_dir().join(format!("shardlog-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let data = dir.join("x.txt");
    let text: String = x.iter().map(|v| format!("{v:.17e}\n")).collect();
    std::fs::write(&data, text).expect("write values");
    let python = std::env::var("SHARDLOG_BENCH_PYTHON").unwrap_or_else(|_| "python3".into());
    let script = r#"
import sys, time
import numpy as np
import scipy
from scipy import stats
x = np.loadtxt(sys.argv[1])
ts = []
for _ in range(5):
    t = time.perf_counter()
    c, loc, s = stats.weibull_min.fit(x, floc=0)
    ts.append(time.perf_counter() - t)
ts.sort()
print(scipy.__version__, ts[len(ts) // 2], c, s)
"#;
    match Command::new(&python)
        .arg("-c")
        .arg(script)
        .arg(&data)
        .output()
    {
        Ok(out) if out.status.success() => {
            let s = String::from_utf8_lossy(&out.stdout);
            let parts: Vec<&str> = s.split_whitespace().collect();
            if let [ver, t, c, sc] = parts[..] {
                let t: f64 = t.parse().unwrap_or(f64::NAN);
                println!(
                    "scipy {ver} weibull_min.fit(x, floc=0): {:.2} ms (median of 5), m = {c}, scale = {sc}",
                    t * 1e3
                );
                println!("speed-up: {:.0}x (goal: at least 10x)", t / ours);
            }
        }
        Ok(out) => println!(
            "scipy comparison skipped: {python} could not run scipy ({})",
            String::from_utf8_lossy(&out.stderr)
                .lines()
                .last()
                .unwrap_or("")
        ),
        Err(e) => println!("scipy comparison skipped: {python}: {e}"),
    }
    let _ = std::fs::remove_dir_all(&dir);

    // 2. one million incidents
    let causes = [
        "thermal stress",
        "impact",
        "edge damage",
        "inclusion",
        "installation",
        "unknown",
    ];
    let suppliers: Vec<String> = (0..12).map(|i| format!("Supplier {i:02}")).collect();
    let d0 = NaiveDate::from_ymd_opt(2020, 1, 1).expect("date");
    let mut rng = Rng(7);
    let incidents: Vec<IncidentFacts> = (0..1_000_000)
        .map(|_| {
            let c = causes[(rng.next_f64() * causes.len() as f64) as usize];
            let s = &suppliers[(rng.next_f64() * suppliers.len() as f64) as usize];
            IncidentFacts {
                cause: Some(c.into()),
                supplier: Some(s.as_str().into()),
                found: d0 + chrono::Days::new((rng.next_f64() * 1800.0) as u64),
                stress_pa: Some(60e6 * (-rng.next_f64().ln()).powf(1.0 / 6.0)),
                ..Default::default()
            }
        })
        .collect();
    let exposures: Vec<Exposure> = suppliers
        .iter()
        .map(|s| Exposure {
            bench: None,
            supplier: Some(s.clone()),
            product: None,
            lot: None,
            site: None,
            panes: 50_000.0,
            from: d0,
            until: None,
        })
        .collect();
    let opts = GroupOptions {
        keys: vec![Key::Cause, Key::Supplier],
        window: Window::new(d0, NaiveDate::from_ymd_opt(2024, 12, 31).expect("date"))
            .expect("window"),
        rates: true,
        weibull: true,
        origin_type: None,
        flag_level: 0.05,
    };
    let counts_only = GroupOptions {
        weibull: false,
        ..opts.clone()
    };
    let mut times = Vec::new();
    for _ in 0..5 {
        let t = Instant::now();
        let table = group(&incidents, &exposures, &counts_only).expect("group");
        times.push(t.elapsed().as_secs_f64());
        assert_eq!(table.total, 1_000_000);
    }
    println!(
        "group 1,000,000 incidents by cause,supplier with rates: {:.0} ms (median of 5)",
        median(times) * 1e3
    );
    let mut times = Vec::new();
    let mut rows = 0;
    for _ in 0..5 {
        let t = Instant::now();
        let table = group(&incidents, &exposures, &opts).expect("group");
        times.push(t.elapsed().as_secs_f64());
        rows = table.rows.len();
    }
    println!(
        "group 1,000,000 incidents by cause,supplier with rates and Weibull: {:.0} ms (median of 5), {rows} groups",
        median(times) * 1e3
    );
}
