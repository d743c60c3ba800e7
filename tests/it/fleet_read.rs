//! The fleet database read with the commands a bench uses (`--db postgres://…`), against a
//! real PostgreSQL server (support::fleet): for the same records the same bytes as the bench
//! file gives, once a reference the bench made before it had a code is shown without the
//! bench qualifier the fleet puts on it.

use std::path::Path;

use crate::fleet_sync::{demo_bench, err, out, run, sync_ok, TestFleet};
use crate::support::fleet::Cluster;

/// Incidents per bench: three benches give the 2,000 or more the comparison asks for.
const PER_BENCH: u64 = 700;

fn text(args: &[&str]) -> String {
    let o = run(args);
    assert!(o.status.success(), "{args:?} failed: {}", err(&o));
    out(&o)
}

/// A demo bench made before it had a code (references `BR-YYMMDD-NNNN`), given one after.
fn bench_coded_late(dir: &Path, code: &str) -> std::path::PathBuf {
    let db = dir.join(format!("{code}.db"));
    let path = db.to_str().expect("a UTF-8 path");
    let o = run(&[
        "demo",
        "--incidents",
        &PER_BENCH.to_string(),
        "--seed",
        "29",
        "--out",
        path,
    ]);
    assert!(o.status.success(), "demo: {}", err(&o));
    let o = run(&["--db", path, "bench", "code", code]);
    assert!(o.status.success(), "bench code: {}", err(&o));
    db
}

/// The references of a `list --json`, in order.
fn references(list_json: &str) -> Vec<String> {
    let v: serde_json::Value = serde_json::from_str(list_json).expect("list --json is JSON");
    v.as_array()
        .expect("an array")
        .iter()
        .map(|r| r["ref"].as_str().expect("a ref").to_string())
        .collect()
}

#[test]
fn list_show_stats_and_export_give_the_bench_files_bytes_from_the_fleet() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let benches = [
        ("NORTH", demo_bench(dir.path(), "NORTH", PER_BENCH)),
        ("SOUTH", demo_bench(dir.path(), "SOUTH", PER_BENCH)),
        ("WEST", bench_coded_late(dir.path(), "WEST")),
    ];
    for (_, db) in &benches {
        sync_ok(db, &fleet.owner_url());
    }
    // fleet users read with the reader role
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));

    // the whole fleet: every incident once, read in keyset pages of 1,000
    let all = text(&["--db", &url, "list", "--json", "--all"]);
    let refs = references(&all);
    assert_eq!(refs.len() as u64, 3 * PER_BENCH);
    let unique: std::collections::BTreeSet<&String> = refs.iter().collect();
    assert_eq!(unique.len(), refs.len(), "a reference listed twice");
    assert!(
        refs.iter().any(|r| r.starts_with("WEST/BR-")),
        "{:?}",
        &refs[..5]
    );

    let mut shown_with_results = 0;
    let mut reported = 0;
    for (code, db) in &benches {
        let file = db.to_str().unwrap();
        // the fleet's qualifier of the references the bench made before its code
        let unqualify = |s: String| s.replace(&format!("\"{code}/BR-"), "\"BR-");
        for extra in [
            &[][..],
            &["--sort", "stress", "--asc"][..],
            &["--sort", "ref"][..],
            &["--sort", "status", "--asc"][..],
            &["--search", "inspection"][..],
            &["--supplier", "KESTREL", "--since", "2025-01-01"][..],
            &["--cause", "none"][..],
        ] {
            let mut args = vec!["list", "--json", "--all"];
            args.extend_from_slice(extra);
            let at_bench = text(&[&["--db", file][..], &args[..]].concat());
            let mut fleet_args = args.clone();
            fleet_args.extend_from_slice(&["--bench", code]);
            let at_fleet = text(&[&["--db", &url][..], &fleet_args[..]].concat());
            assert!(
                references(&at_bench).len() > 1,
                "{code} {extra:?}: too few to compare"
            );
            assert_eq!(unqualify(at_fleet), at_bench, "{code}: list {extra:?}");
        }
        for by in [
            &["--by", "cause,supplier", "--rates"][..],
            &["--by", "origin-type", "--weibull", "--stress", "net"][..],
            &[
                "--by",
                "asset-type,temper",
                "--trend",
                "--since",
                "2024-06-01",
            ][..],
            &["--by", "lot", "--weibull", "--only", "supplier=BRELLIN"][..],
        ] {
            let mut args = vec!["stats", "--json"];
            args.extend_from_slice(by);
            let at_bench = text(&[&["--db", file][..], &args[..]].concat());
            let mut fleet_args = args.clone();
            fleet_args.extend_from_slice(&["--bench", code]);
            let at_fleet = text(&[&["--db", &url][..], &fleet_args[..]].concat());
            assert_eq!(at_fleet, at_bench, "{code}: stats {by:?}");
        }
        for args in [
            &["export", "--format", "json"][..],
            &["export", "--format", "csv"][..],
            &[
                "export",
                "--format",
                "json",
                "--cause",
                "impact",
                "--until",
                "2025-06-30",
            ][..],
        ] {
            // the bench signs its export with its own key; the fleet holds no bench's key
            let at_bench = without_signed_head(&text(&[&["--db", file][..], args].concat()));
            let at_fleet = text(&[&["--db", &url][..], args, &["--bench", code][..]].concat());
            assert!(
                at_bench.len() > 10_000,
                "{args:?}: {} bytes",
                at_bench.len()
            );
            // the CSV's reference column is unquoted
            let at_fleet = unqualify(at_fleet).replace(&format!("\n{code}/BR-"), "\nBR-");
            assert_eq!(at_fleet, at_bench, "{code}: {args:?}");
        }
        // one incident in ten, by its reference as the fleet shows it
        let listed = references(&text(&["--db", file, "list", "--json", "--all"]));
        for reference in listed.iter().step_by(10) {
            let at_bench = text(&["--db", file, "show", reference, "--json"]);
            let in_fleet = if reference.starts_with("BR-") && !reference.contains(code) {
                format!("{code}/{reference}")
            } else {
                reference.clone()
            };
            let at_fleet = text(&["--db", &url, "show", &in_fleet, "--json"]);
            assert_eq!(unqualify(at_fleet), at_bench, "show {reference}");
            if at_bench.contains("\"result\": {") {
                shown_with_results += 1;
            }
        }
        // the summary of one incident in thirty-five: the same content, from the same head
        for reference in listed.iter().step_by(35) {
            let in_fleet = if reference.starts_with("BR-") && !reference.contains(code) {
                format!("{code}/{reference}")
            } else {
                reference.clone()
            };
            let bench: serde_json::Value = serde_json::from_str(&text(&[
                "--db", file, "report", reference, "--format", "json",
            ]))
            .unwrap();
            let fleet_text = text(&["--db", &url, "report", &in_fleet, "--format", "json"]);
            let fleet_json: serde_json::Value = serde_json::from_str(&fleet_text).unwrap();
            let content = |v: &serde_json::Value| {
                unqualify(serde_json::to_string_pretty(&v["content"]).unwrap())
            };
            assert_eq!(content(&fleet_json), content(&bench), "report {reference}");
            if !reference.starts_with("BR-") || reference.contains(code) {
                assert_eq!(
                    fleet_json["proof"]["content_sha256"], bench["proof"]["content_sha256"],
                    "report {reference}"
                );
            }
            // the fleet's summary names the fleet and its benches, never a password
            let made_from = fleet_json["proof"]["made_from"].as_str().unwrap();
            assert!(
                made_from.contains("fleet") && made_from.contains("NORTH, SOUTH, WEST"),
                "{made_from}"
            );
            assert!(bench["proof"].get("made_from").is_none());
            reported += 1;
        }
        // a dispute bundle: at the bench, and on the fleet as that bench's records
        let bundle = |db: &str, name: &str, bench_flag: &[&str]| {
            let out_dir = dir.path().join(format!("{code}-{name}"));
            let lot = lots_of(file, "KESTREL");
            let args = [
                &["--db", db, "dispute", "--supplier", "KESTREL", "--lot"][..],
                &[lot.as_str()][..],
                &["--cause", "impact", "--cause", "thermal", "-o"][..],
                &[out_dir.to_str().unwrap()][..],
                bench_flag,
            ]
            .concat();
            text(&args);
            let json = std::fs::read_to_string(out_dir.join("bundle.json")).unwrap();
            let csv = std::fs::read_to_string(out_dir.join("figures.csv")).unwrap();
            let v: serde_json::Value = serde_json::from_str(&json).unwrap();
            (v, csv)
        };
        let (at_bench_bundle, bench_csv) = bundle(file, "bench", &[]);
        let (at_fleet_bundle, fleet_csv) = bundle(&url, "fleet", &["--bench", code]);
        let part = |v: &serde_json::Value, key: &str| {
            let mut v = v["content"][key].clone();
            if let Some(incidents) = v.as_array_mut().filter(|_| key == "incidents") {
                for i in incidents {
                    // the digest of a summary whose reference the fleet qualifies is that of
                    // other text; every field it is taken over is compared
                    if i["reference"].as_str().is_some_and(|r| r.contains('/')) {
                        i["content_sha256"] = serde_json::Value::Null;
                    }
                }
            }
            unqualify(serde_json::to_string_pretty(&v).unwrap())
                .replace(&format!("incidents/{code}_BR-"), "incidents/BR-")
        };
        let part_at_bench = |v: &serde_json::Value, key: &str| {
            let mut v = v.clone();
            if key == "incidents" && *code == "WEST" {
                for i in v["content"]["incidents"].as_array_mut().unwrap() {
                    i["content_sha256"] = serde_json::Value::Null;
                }
            }
            part(&v, key)
        };
        for key in ["selection", "cover", "incidents", "attachments"] {
            assert_eq!(
                part(&at_fleet_bundle, key),
                part_at_bench(&at_bench_bundle, key),
                "{code}: the bundle's {key}"
            );
        }
        let incidents = at_bench_bundle["content"]["incidents"].as_array().unwrap();
        assert!(incidents.len() > 2, "{code}: {} incidents", incidents.len());
        // the last column is each summary's digest (see above)
        let csv = |t: &str| -> String {
            t.lines()
                .map(|l| match (*code == "WEST", l.rsplit_once(',')) {
                    (true, Some((rest, _))) => rest.to_string(),
                    _ => l.to_string(),
                })
                .collect::<Vec<_>>()
                .join("\n")
        };
        assert_eq!(
            csv(&fleet_csv.replace(&format!("\n{code}/BR-"), "\nBR-")),
            csv(&bench_csv),
            "{code}: figures.csv"
        );
        // the fleet's bundle is made from the bench's witnessed head
        assert_eq!(
            at_fleet_bundle["content"]["audit_head_seq"],
            fleet.count(&format!(
                "SELECT head_seq FROM fleet_benches WHERE code = '{code}'"
            ))
        );
    }
    assert!(reported >= 60, "{reported}");
    // analyses (the fleet holds their digests) were among those compared
    assert!(shown_with_results > 15, "{shown_with_results}");
}

#[test]
fn verify_on_the_fleet_checks_every_witnessed_chain_the_receipts_and_the_read_tables() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    for code in ["NORTH", "SOUTH"] {
        sync_ok(&demo_bench(dir.path(), code, 60), &fleet.owner_url());
    }
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    let ok = text(&["--db", &url, "verify"]);
    assert!(
        ok.contains("ok: bench NORTH:") && ok.contains("ok: bench SOUTH:"),
        "{ok}"
    );
    assert!(ok.contains("2 receipts link correctly"), "{ok}");
    assert!(ok.contains("120 incidents' facts and words match"), "{ok}");
    // the owner changes what the read tables say of one incident, behind the triggers' back
    let mut admin = fleet.admin();
    admin
        .batch_execute(
            "UPDATE fleet_facts SET cause = 'vandalism'
             WHERE id = (SELECT min(id) FROM fleet_facts WHERE origin = 'SOUTH')",
        )
        .unwrap();
    let o = run(&["--db", &url, "verify"]);
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
    assert!(
        err(&o).contains("BR-SOUTH-") && err(&o).contains("read tables"),
        "{}",
        err(&o)
    );
    // and rewrites a witnessed row of NORTH (the append-only trigger switched off first)
    admin
        .batch_execute(
            "ALTER TABLE bench_chain DISABLE TRIGGER bench_chain_append_only;
             UPDATE bench_chain SET actor = 'someone else' WHERE bench = 'NORTH' AND seq = 3;
             ALTER TABLE bench_chain ENABLE TRIGGER bench_chain_append_only;",
        )
        .unwrap();
    let o = run(&["--db", &url, "verify", "--json"]);
    assert_eq!(o.status.code(), Some(1));
    let report: serde_json::Value = serde_json::from_str(&out(&o)).expect("JSON");
    let problems: Vec<&str> = report["problems"]
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p.as_str().unwrap())
        .collect();
    assert!(
        problems.contains(&"bench NORTH: witnessed row 3 has a hash that is not its content"),
        "{problems:?}"
    );
}

#[test]
fn the_fleet_refuses_what_writes_and_names_where_the_edit_is_made() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 40);
    sync_ok(&db, &fleet.owner_url());
    let before = fleet.state();
    let url = fleet.owner_url();
    // even as the fleet's owner: the commands that write refuse before touching anything
    for args in [
        vec!["init"],
        vec!["lookups", "add", "cause", "frost", "frost damage"],
        vec!["bench", "code", "EAST"],
    ] {
        let o = run(&[&["--db", url.as_str()][..], &args[..]].concat());
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", err(&o));
        assert!(
            err(&o).contains("an edit is made at the bench that owns the incident"),
            "{args:?}: {}",
            err(&o)
        );
    }
    assert_eq!(fleet.state(), before);
    // nothing was made in the working folder under the URL's name
    assert!(!Path::new("postgresql:").exists());
    // a bench the fleet does not know is a usage error naming the ones it does
    let o = run(&["--db", &url, "list", "--bench", "EAST"]);
    assert_eq!(o.status.code(), Some(2), "{}", err(&o));
    assert!(
        err(&o).contains("no bench EAST") && err(&o).contains("NORTH"),
        "{}",
        err(&o)
    );
    // and on a bench file, --bench is its own code only
    let file = db.to_str().unwrap();
    let o = run(&["--db", file, "list", "--bench", "SOUTH"]);
    assert_eq!(o.status.code(), Some(2), "{}", err(&o));
    assert!(err(&o).contains("bench NORTH, not SOUTH"), "{}", err(&o));
    assert_eq!(
        text(&["--db", file, "list", "--bench", "north", "--json", "--all"]),
        text(&["--db", file, "list", "--json", "--all"])
    );
}

#[test]
fn fleet_demo_fills_a_fleet_through_the_benches_push() {
    let cluster = Cluster::shared();
    let name = crate::support::fleet::fresh_database(cluster);
    let url = cluster.url(&name);
    let dir = tempfile::tempdir().unwrap();
    let keep = dir.path().join("benches");
    let said = text(&[
        "fleet",
        "demo",
        "--url",
        &url,
        "--incidents",
        "301",
        "--benches",
        "3",
        "--through-sync",
        "--keep-benches",
        keep.to_str().unwrap(),
    ]);
    assert!(said.contains("301 incidents over 3 benches"), "{said}");
    // 101 + 100 + 100, each bench's incidents owned by it in the fleet
    for (code, n) in [("B01", 101), ("B02", 100), ("B03", 100)] {
        let listed = references(&text(&[
            "--db", &url, "list", "--json", "--all", "--bench", code,
        ]));
        assert_eq!(listed.len(), n, "{code}");
        let file = keep.join(format!("{code}.db"));
        assert_eq!(
            text(&["--db", &url, "list", "--json", "--all", "--bench", code]),
            text(&["--db", file.to_str().unwrap(), "list", "--json", "--all"])
        );
    }
    let ok = text(&["--db", &url, "verify"]);
    assert!(ok.contains("3 receipts link correctly"), "{ok}");
    // a usage error for a number of benches it cannot make
    let o = run(&[
        "fleet",
        "demo",
        "--url",
        &url,
        "--incidents",
        "2",
        "--benches",
        "3",
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", err(&o));
}

/// The fleet reads the numbers of the audit images ("f64:" and the 16 hex digits of the IEEE
/// 754 bits) in SQL; every pattern must come back as the very same double (IEEE 754-2008
/// binary64: sign, 11-bit biased exponent, 52-bit fraction; subnormals at exponent 0).
#[test]
fn the_fleets_reading_of_an_image_number_is_bit_exact() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let mut admin = fleet.admin();
    let mut patterns: Vec<u64> = [
        0.0f64,
        -0.0,
        1.0,
        -1.0,
        0.1,
        2.9198258091608927e7,
        -6.9e7,
        1e-300,
        1e300,
        f64::MIN_POSITIVE,
        f64::MAX,
        f64::MIN,
        f64::EPSILON,
    ]
    .iter()
    .map(|x| x.to_bits())
    .collect();
    // subnormals: the smallest, the largest, one between
    patterns.extend([1u64, 0x000f_ffff_ffff_ffff, 0x0000_0000_dead_beef]);
    // and a spread of other patterns (splitmix64 from a fixed seed)
    let mut state = 0x5eed_u64;
    for _ in 0..2000 {
        state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        let bits = z ^ (z >> 31);
        if !f64::from_bits(bits).is_nan() {
            patterns.push(bits);
        }
    }
    for bits in patterns {
        let text = format!("f64:{bits:016x}");
        let back: f64 = admin
            .query_one("SELECT fleet_f64($1)", &[&text])
            .unwrap()
            .get(0);
        assert_eq!(back.to_bits(), bits, "{text} read as {back:e}");
    }
    for not_a_pattern in [
        "1.5",
        "f64:3ff",
        "f64:3FF0000000000000",
        "f64:3ff000000000000g",
    ] {
        let none: Option<f64> = admin
            .query_one("SELECT fleet_f64($1)", &[&not_a_pattern])
            .unwrap()
            .get(0);
        assert_eq!(none, None, "{not_a_pattern} reads as nothing");
    }
}

/// A bench file's export without its signed head (the CSV's first line, the JSON document's
/// top-level `signed_head` member), every other byte as written.
/// The code of the lot of `supplier` with the most incidents at the bench.
fn lots_of(file: &str, supplier: &str) -> String {
    let c = rusqlite::Connection::open(file).unwrap();
    c.query_row(
        "SELECT l.code FROM incidents i JOIN lots l ON l.id = i.lot_id
         JOIN suppliers s ON s.id = i.supplier_id
         WHERE s.code = ?1 GROUP BY l.code ORDER BY count(*) DESC, l.code LIMIT 1",
        [supplier],
        |r| r.get(0),
    )
    .unwrap()
}

fn without_signed_head(export: &str) -> String {
    if let Some(rest) = export.strip_prefix("# shardlog signed head ") {
        let (_, body) = rest.split_once('\n').expect("a line after the signed head");
        return body.to_string();
    }
    let lines: Vec<&str> = export.split_inclusive('\n').collect();
    let start = lines
        .iter()
        .position(|l| l.starts_with("  \"signed_head\": "))
        .expect("a signed JSON export");
    let end = start
        + lines[start..]
            .iter()
            .position(|l| l.starts_with("  }"))
            .expect("the end of signed_head");
    let mut out: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
    let last_member = !lines[end].starts_with("  },");
    out.drain(start..=end);
    if last_member {
        // the member before it ends the object now: no comma after it
        let prev = &mut out[start - 1];
        if let Some(stripped) = prev.strip_suffix(",\n") {
            *prev = format!("{stripped}\n");
        }
    }
    out.concat()
}
