//! The `mirror` and `materials` commands from outside: the real binary, its exit code, stdout
//! and stderr.

use std::process::Command;

fn run(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .args(args)
        .env("SHARDLOG_DB", "/nonexistent/never-opened.db")
        .output()
        .expect("the binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

const M: &[&str] = &["mirror", "--material", "soda-lime"];

fn with(extra: &[&'static str]) -> Vec<&'static str> {
    let mut v = M.to_vec();
    v.extend_from_slice(extra);
    v
}

/// (arguments, exit code, text the first stderr line must contain, produced by clap).
type Case = (Vec<&'static str>, i32, &'static str, bool);

fn cases() -> Vec<Case> {
    vec![
        // wrong or missing units
        (
            with(&["--radius", "1"]),
            2,
            "--radius: '1' has no unit",
            false,
        ),
        (with(&["--radius", "5kg"]), 2, "not a unit of length", false),
        (with(&["--radius", "1MPa"]), 2, "--radius", false),
        (
            with(&["--radius", "1mm", "--constant", "2"]),
            2,
            "--constant: '2' has no unit",
            false,
        ),
        (
            with(&["--radius", "1mm", "--constant", "2MPa"]),
            2,
            "fracture toughness",
            false,
        ),
        (
            with(&["--radius", "1mm", "--toughness", "0.75"]),
            2,
            "--toughness",
            false,
        ),
        (
            with(&["--radius", "1mm", "--thickness", "6"]),
            2,
            "--thickness: '6' has no unit",
            false,
        ),
        (
            with(&["--radius", "1mm", "--measured-flaw", "90 furlongs"]),
            2,
            "--measured-flaw",
            false,
        ),
        (
            with(&[
                "--radius",
                "1mm",
                "--temper",
                "fully-tempered",
                "--surface-compression",
                "95",
            ]),
            2,
            "--surface-compression: '95' has no unit",
            false,
        ),
        // decimal comma
        (with(&["--radius", "0,98mm"]), 2, "decimal comma", false),
        (
            with(&["--radius", "1mm", "--aspect", "0,8"]),
            2,
            "--aspect",
            false,
        ),
        // NaN, infinities, zero, negative
        (
            with(&["--radius", "NaNmm"]),
            2,
            "not a finite number",
            false,
        ),
        (
            with(&["--radius", "inf mm"]),
            2,
            "not a finite number",
            false,
        ),
        (
            with(&["--radius", "0mm"]),
            2,
            "must be greater than zero",
            false,
        ),
        (
            with(&["--radius", "-1mm"]),
            2,
            "must be greater than zero",
            false,
        ),
        (
            with(&["--radius", "1e400mm"]),
            2,
            "not a finite number",
            false,
        ),
        (
            with(&["--radius", "20m"]),
            2,
            "--radius: a mirror-mist radius of 20000 mm is out of range",
            false,
        ),
        (
            with(&["--radius", "1mm", "--toughness", "-0.75MPa√m"]),
            2,
            "--toughness",
            false,
        ),
        (
            with(&["--radius", "1mm", "--aspect", "-0.5"]),
            2,
            "--aspect",
            false,
        ),
        (
            with(&["--radius", "1mm", "--aspect", "3"]),
            2,
            "--aspect",
            false,
        ),
        (
            with(&[
                "--radius",
                "1mm",
                "--temper",
                "fully-tempered",
                "--surface-compression",
                "-95MPa",
            ]),
            2,
            "negative",
            false,
        ),
        // missing values
        (with(&[]), 2, "--radius: missing", false),
        (
            vec!["mirror", "--radius", "1mm"],
            2,
            "--material: missing",
            false,
        ),
        (
            with(&["--boundary", "mist-hackle"]),
            2,
            "mist-hackle has no radius",
            false,
        ),
        (
            with(&[
                "--boundary",
                "mirror-mist",
                "--radius",
                "1mm",
                "--boundary",
                "branching",
            ]),
            2,
            "branching has no radius",
            false,
        ),
        (with(&["--radius"]), 2, "--radius", true),
        (
            with(&["--radius", "1mm", "--temper", "chemically-strengthened"]),
            2,
            "--surface-compression",
            false,
        ),
        (
            with(&["--radius", "1mm", "--flaw", "semi-elliptical"]),
            2,
            "--aspect: missing",
            false,
        ),
        // unknown names
        (
            vec!["mirror", "--material", "unobtainium", "--radius", "1mm"],
            2,
            "not in the library",
            false,
        ),
        (
            with(&["--boundary", "mirrormist", "--radius", "1mm"]),
            2,
            "--boundary",
            false,
        ),
        (
            with(&["--radius", "1mm", "--temper", "half-baked"]),
            2,
            "--temper",
            false,
        ),
        (
            with(&["--radius", "1mm", "--origin", "edge"]),
            2,
            "--origin",
            false,
        ),
        (
            with(&["--radius", "1mm", "--flaw", "wedge"]),
            2,
            "--flaw",
            false,
        ),
        (
            with(&["--radius", "1mm", "--frobnicate"]),
            2,
            "--frobnicate",
            true,
        ),
        // contradictory flags
        (
            with(&[
                "--boundary",
                "mirror-mist",
                "--radius",
                "1mm",
                "--boundary",
                "mirror-mist",
                "--radius",
                "2mm",
            ]),
            2,
            "given twice",
            false,
        ),
        (
            with(&[
                "--radius",
                "1mm",
                "--temper",
                "annealed",
                "--surface-compression",
                "95MPa",
            ]),
            2,
            "annealed",
            false,
        ),
        (
            with(&["--radius", "1mm", "--surface-compression", "95MPa"]),
            2,
            "without --temper",
            false,
        ),
        (
            with(&["--radius", "1mm", "--flaw", "penny", "--aspect", "0.5"]),
            2,
            "--aspect",
            false,
        ),
        (
            with(&[
                "--radius",
                "1mm",
                "--thickness",
                "6mm",
                "--depth-ratio",
                "0.1",
            ]),
            2,
            "--depth-ratio",
            false,
        ),
        (
            with(&[
                "--boundary",
                "mirror-mist",
                "--radius",
                "1mm",
                "--constant",
                "1.9MPa√m",
                "--constant",
                "2MPa√m",
            ]),
            2,
            "--constant: given twice",
            false,
        ),
        (
            with(&[
                "--radius",
                "1mm",
                "--boundary",
                "branching",
                "--radius",
                "15mm",
            ]),
            2,
            "comes before any --boundary",
            false,
        ),
        (
            with(&[
                "--radius",
                "1mm",
                "--toughness",
                "0.75MPa√m",
                "--toughness",
                "0.8MPa√m",
            ]),
            2,
            "--toughness",
            true,
        ),
        (
            with(&[
                "--radius",
                "1mm",
                "--thickness",
                "6mm",
                "--temper",
                "chemically-strengthened",
                "--surface-compression",
                "600MPa",
                "--layer-depth",
                "4mm",
            ]),
            2,
            "--layer-depth",
            false,
        ),
        // a material without the constant asked for
        (
            vec![
                "mirror",
                "--material",
                "aluminum-oxynitride",
                "--boundary",
                "mist-hackle",
                "--radius",
                "1mm",
            ],
            2,
            "--constant",
            false,
        ),
        // terminal escapes in a name are not echoed raw
        (
            vec!["mirror", "--material", "\u{1b}[31mred", "--radius", "1mm"],
            2,
            "not in the library",
            false,
        ),
    ]
}

#[test]
fn bad_inputs_fail_cleanly() {
    let cases = cases();
    assert!(cases.len() >= 25);
    for (args, code, needle, from_clap) in cases {
        let (got, stdout, stderr) = run(&args);
        let first = stderr.lines().next().unwrap_or("");
        assert_eq!(got, code, "{args:?}: exit {got}, stderr {stderr}");
        assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
        assert!(stdout.is_empty(), "{args:?}: stdout {stdout}");
        assert!(
            first.contains(needle),
            "{args:?}: first line {first:?} lacks {needle:?}"
        );
        assert!(!stderr.contains('\u{1b}'), "{args:?}: escape in {stderr:?}");
        if !from_clap {
            assert_eq!(stderr.lines().count(), 1, "{args:?}: {stderr}");
            assert!(first.starts_with("shardlog: --"), "{args:?}: {first}");
        }
    }
}

#[test]
fn mirror_example_of_the_readme() {
    let (code, out, err) = run(&with(&[
        "--boundary",
        "mirror-mist",
        "--radius",
        "0.98mm",
        "--radius",
        "1.04mm",
    ]));
    assert_eq!(code, 0, "{err}");
    // computed: 1.9 / √(1.01e-3) = 59.8 MPa
    assert!(out.contains("59.8 MPa"), "{out}");
    assert!(out.contains("µm"));
    assert!(out.contains("published: G. D. Quinn"), "{out}");
    assert!(out
        .trim_end()
        .lines()
        .last()
        .unwrap()
        .starts_with("Caution:"));
}

#[test]
fn mirror_json_has_the_fields_of_the_issue() {
    let (code, out, err) = run(&with(&[
        "--boundary",
        "mirror-mist",
        "--radius",
        "1mm",
        "--boundary",
        "mist-hackle",
        "--radius",
        "1.34mm",
        "--temper",
        "fully-tempered",
        "--surface-compression",
        "95MPa",
        "--thickness",
        "6mm",
        "--measured-flaw",
        "90um",
        "--json",
    ]));
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("one JSON object");
    for key in [
        "stress_mpa",
        "stress_low_mpa",
        "stress_high_mpa",
        "applied_stress_mpa",
        "flaw_size_um",
        "constant_mpa_sqrt_m",
        "toughness_mpa_sqrt_m",
        "geometry_factor",
        "readings",
        "boundaries",
        "warnings",
    ] {
        assert!(v.get(key).is_some(), "missing {key}");
    }
    let s = v["stress_mpa"].as_f64().unwrap();
    // computed: 1.9 / √0.001 = 60.08; applied = 60.08 + 95
    assert!((s - 60.08).abs() < 0.01, "{s}");
    assert!((v["applied_stress_mpa"].as_f64().unwrap() - 155.08).abs() < 0.01);
    assert_eq!(v["boundaries"].as_array().unwrap().len(), 2);
    assert_eq!(v["readings"].as_array().unwrap().len(), 2);
    assert!(v["warnings"].is_array());
}

#[test]
fn bench_analyst_case_warns_that_the_mirror_is_not_closed() {
    // workflows.md §1: one mirror–mist reading larger than the 6 mm thickness, branching 15 mm
    let (code, out, err) = run(&with(&[
        "--boundary",
        "mirror-mist",
        "--radius",
        "7mm",
        "--boundary",
        "branching",
        "--radius",
        "15mm",
        "--thickness",
        "6mm",
        "--json",
    ]));
    assert_eq!(code, 0, "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let warnings: Vec<&str> = v["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|w| w.as_str())
        .collect();
    assert!(
        warnings
            .iter()
            .any(|w| w.contains("not closed") && w.contains("18.8 MPa")),
        "{warnings:?}"
    );
    // the headline moves to the branching boundary: computed 2.3 / √0.015 = 18.78 MPa, and the
    // flaw size follows it
    assert_eq!(v["stress_from"], "branching");
    assert!((v["stress_mpa"].as_f64().unwrap() - 18.78).abs() < 0.01);
    assert!((v["constant_mpa_sqrt_m"].as_f64().unwrap() - 2.3).abs() < 1e-9);
}

#[test]
fn materials_lists_the_library() {
    let (code, out, err) = run(&["materials"]);
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("soda-lime") && out.contains("aluminum-oxynitride"));
    let (code, out, _) = run(&["materials", "--json"]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    let list = v["materials"].as_array().unwrap();
    assert!(list.len() >= 8);
    assert_eq!(list[0]["key"], "soda-lime");
    assert_eq!(list[0]["a_i"]["provenance"]["kind"], "published");
}
