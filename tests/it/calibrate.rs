//! Calibrating a mirror constant: the fit in the core against data made from a known constant
//! and against hand arithmetic, and `shardlog calibrate` from outside (the real binary).

use std::path::PathBuf;
use std::process::Command;

use shardlog_core::fracture::calibration::{fit_boundary, Break};
use shardlog_core::fracture::Boundary;

const MPA: f64 = 1e6;

/// splitmix64: a small seeded generator, so the noisy data sets are the same on every run.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    /// Uniform in (0, 1).
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    /// Standard normal (Box–Muller).
    fn normal(&mut self) -> f64 {
        let (u1, u2) = (self.uniform(), self.uniform());
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// `n` specimens broken between 40 and 200 MPa whose radii follow σ = A/√R, with a reading
/// scatter of `rel_sd` (one standard deviation) on each stress.
fn noisy_set(seed: u64, a: f64, n: usize, rel_sd: f64) -> Vec<Break> {
    let mut rng = Rng(seed);
    (0..n)
        .map(|_| {
            let stress = (40.0 + 160.0 * rng.uniform()) * MPA;
            let radius = (a / stress).powi(2);
            Break {
                stress_pa: stress * (1.0 + rel_sd * rng.normal()),
                radius_m: radius,
            }
        })
        .collect()
}

#[test]
fn a_known_constant_is_recovered_within_its_interval() {
    // Data generated from A_i = 1.9 MPa·√m (soda-lime, the library's value: Quinn's guide,
    // 1.8–2.1 across studies) with 3 % scatter on the stress (common practice for a load
    // frame and a reading under the stereo microscope; a proportional scatter).
    let a = 1.9 * MPA;
    let set = noisy_set(20_261_203, a, 15, 0.03);
    let fit = fit_boundary(Boundary::MirrorMist, &set).unwrap();
    assert!(
        fit.constant_low <= a && a <= fit.constant_high,
        "{} .. {}",
        fit.constant_low,
        fit.constant_high
    );
    assert!((fit.constant - a).abs() < 0.03 * a, "{}", fit.constant);
    assert!(fit.constant_sd > 0.0 && fit.constant_sd < 0.02 * a);
    let slope = fit.slope.clone().unwrap();
    assert!(slope.consistent, "{slope:?}");
    assert!(!fit.slope_flagged());
    // The residuals are the stresses less the fitted line, specimen by specimen.
    for (r, b) in fit.residuals.iter().zip(&set) {
        assert!(
            (r.residual_pa - (b.stress_pa - a_over_root(fit.constant, b.radius_m))).abs() < 1e-6
        );
    }

    // The interval means what it says: over 400 seeded sets, the 95 % interval holds the
    // true A about 95 % of the time (binomial: 380 ± 2 sd is 371 to 389; allow 364 to 396).
    let held = (0..400u64)
        .filter(|seed| {
            let f = fit_boundary(Boundary::MirrorMist, &noisy_set(*seed, a, 8, 0.05)).unwrap();
            f.constant_low <= a && a <= f.constant_high
        })
        .count();
    assert!((364..=396).contains(&held), "held {held} of 400");
}

fn a_over_root(a: f64, r: f64) -> f64 {
    a / r.sqrt()
}

#[test]
fn a_set_with_the_wrong_slope_is_flagged() {
    // σ ∝ R^(−0.3) instead of R^(−½): radii from 0.2 to 3 mm, 2 % scatter. The slope check
    // must see it; the same radii with the right slope must pass.
    let mut rng = Rng(7);
    let mut wrong = Vec::new();
    let mut right = Vec::new();
    for i in 0..12 {
        let r = (0.2 + 2.8 * i as f64 / 11.0) * 1e-3;
        let noise = 1.0 + 0.02 * rng.normal();
        wrong.push(Break {
            stress_pa: 60.0 * MPA * (r / 1e-3).powf(-0.3) * noise,
            radius_m: r,
        });
        right.push(Break {
            stress_pa: 60.0 * MPA * (r / 1e-3).powf(-0.5) * noise,
            radius_m: r,
        });
    }
    let f = fit_boundary(Boundary::MistHackle, &wrong).unwrap();
    let s = f.slope.clone().unwrap();
    assert!((s.slope + 0.3).abs() < 0.05, "{s:?}");
    assert!(!s.consistent && f.slope_flagged(), "{s:?}");
    assert!(s.slope_low > -0.5, "{s:?}");
    let f = fit_boundary(Boundary::MistHackle, &right).unwrap();
    assert!(!f.slope_flagged(), "{:?}", f.slope);
}

#[test]
fn the_least_squares_matches_hand_arithmetic() {
    // Computed by hand (in MPa and mm, then converted; 1 MPa·√mm = √0.001 MPa·√m):
    //   R = 1, 4, 0.25 mm;  σ = 60, 31, 122 MPa
    //   own constants σ√R = 60·1, 31·2, 122·0.5 = 60, 62, 61 MPa·√mm
    //   A = (60 + 62 + 61)/3 = 61 MPa·√mm = 61·0.0316228 = 1.92899 MPa·√m
    //   s² = ((−1)² + 1² + 0²)/(3 − 1) = 1, s = 1 MPa·√mm;  sd(A) = s/√3 = 0.57735 MPa·√mm
    //   interval: A ± t(0.975, 2)·sd(A), t = 4.303 (Student's t table, NIST/SEMATECH 1.3.6.7.2)
    //   residuals σ − A/√R: 60 − 61 = −1; 31 − 30.5 = 0.5; 122 − 122 = 0 (MPa)
    //   slope of ln σ on ln R: ln R = 0, ln 4, −ln 4 (mean 0), Sxx = 2 ln²4,
    //          Sxy = ln 4 · ln 31 − ln 4 · ln 122, so b = ln(31/122) / (2 ln 4) = −0.49414…
    let mm = |v: f64| v * 1e-3;
    let set = [
        Break {
            stress_pa: 60.0 * MPA,
            radius_m: mm(1.0),
        },
        Break {
            stress_pa: 31.0 * MPA,
            radius_m: mm(4.0),
        },
        Break {
            stress_pa: 122.0 * MPA,
            radius_m: mm(0.25),
        },
    ];
    let f = fit_boundary(Boundary::MirrorMist, &set).unwrap();
    let root_mm = 0.001f64.sqrt(); // 1 MPa·√mm in MPa·√m
    let close = |got: f64, want: f64| (got - want).abs() <= 1e-9 * want.abs();
    assert!(close(f.constant, 61.0 * root_mm * MPA), "{}", f.constant);
    assert!((f.constant / MPA - 1.928_99).abs() < 1e-5);
    assert!(close(f.specimen_sd, root_mm * MPA));
    assert!(close(f.constant_sd, root_mm * MPA / 3f64.sqrt()));
    assert_eq!(f.coverage, 4.303);
    let half = 4.303 / 3f64.sqrt() * root_mm * MPA;
    assert!(close(f.constant_high - f.constant, half));
    assert!(close(f.constant - f.constant_low, half));
    let want = [-1.0, 0.5, 0.0];
    for (r, w) in f.residuals.iter().zip(want) {
        assert!(
            (r.residual_pa / MPA - w).abs() < 1e-9,
            "{} vs {w}",
            r.residual_pa
        );
    }
    assert!(close(f.residuals[0].own_constant, 60.0 * root_mm * MPA));
    let b = (31.0f64 / 122.0).ln() / (2.0 * 4f64.ln());
    let s = f.slope.unwrap();
    assert!((s.slope - b).abs() < 1e-12 && (b + 0.494_14).abs() < 1e-5);
}

// ---- the command

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

fn run(args: &[&str]) -> Run {
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .args(args)
        .env_remove("SHARDLOG_DB")
        .output()
        .unwrap();
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn csv(dir: &tempfile::TempDir, text: &str) -> PathBuf {
    let p = dir.path().join("breaks.csv");
    std::fs::write(&p, text).unwrap();
    p
}

/// The hand-computed set above, typed as at the bench, in mixed units.
const HAND: &str = "specimen,stress,mirror_mist,analyst\n\
                    B-1,60 MPa,1 mm,Lab North\n\
                    B-2,31 MPa,4000 µm,Lab North\n\
                    B-3,122 MPa,0.025 cm,Lab North\n";

#[test]
fn the_command_prints_the_fit_with_units() {
    let dir = tempfile::tempdir().unwrap();
    let p = csv(&dir, HAND);
    let r = run(&["calibrate", "--input", p.to_str().unwrap()]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("A_i = 1.929 MPa·√m"), "{}", r.stdout);
    assert!(r.stdout.contains("consistent with −½"), "{}", r.stdout);
    assert!(r.stdout.contains("B-2"), "{}", r.stdout);
    assert!(r.stdout.contains("0.500 MPa"), "{}", r.stdout); // residual of B-2

    let r = run(&["calibrate", "--input", p.to_str().unwrap(), "--json"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let v: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    let b = &v["boundaries"][0];
    assert_eq!(b["boundary"], "mirror-mist");
    assert_eq!(b["n"], 3);
    let a = b["constant_mpa_sqrt_m"].as_f64().unwrap();
    assert!((a - 61.0 * 0.001f64.sqrt()).abs() < 1e-9);
    assert_eq!(b["specimens"][1]["specimen"], "B-2");
    assert!((b["specimens"][1]["radius_mm"].as_f64().unwrap() - 4.0).abs() < 1e-12);
    assert_eq!(b["slope_flagged"], false);
    assert_eq!(v["analysts"][0], "Lab North");
    let digest = shardlog_core::canonical::sha256_hex(HAND.as_bytes());
    assert_eq!(v["input_sha256"], digest.as_str());
}

#[test]
fn the_command_flags_a_wrong_slope() {
    // σ ∝ R^(−0.3), exact: slope −0.3, far from −½
    let mut text = String::from("stress,branching\n");
    for r in [0.5, 1.0, 2.0, 4.0] {
        text.push_str(&format!("{} MPa,{r} mm\n", 100.0 * f64::powf(r, -0.3)));
    }
    let dir = tempfile::tempdir().unwrap();
    let p = csv(&dir, &text);
    let r = run(&["calibrate", "--input", p.to_str().unwrap()]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("NOT consistent with −½"), "{}", r.stdout);
    let r = run(&["calibrate", "--input", p.to_str().unwrap(), "--json"]);
    let v: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    assert_eq!(v["boundaries"][0]["slope_flagged"], true);
}

#[test]
fn every_problem_of_the_file_is_reported_at_once() {
    let text = "specimen,stress,mirror_mist,mist_hackle,colour\n\
                S1,61.5,1.02 mm,1.5 mm,red\n\
                S2,80 MPa,0,5 mm,,blue\n\
                S3,-45 MPa,1.8 mm,,green\n\
                S4,120 MPa,,,grey\n\
                S5,70 MPa,0.7 MPa,,grey\n\
                S6,70 MPa,0.7 mm\n\
                S7,seventy,0.7 mm,,grey\n";
    let dir = tempfile::tempdir().unwrap();
    let p = csv(&dir, text);
    let r = run(&["calibrate", "--input", p.to_str().unwrap()]);
    assert_eq!(r.code, 1, "{}", r.stderr);
    assert!(r.stdout.is_empty(), "{}", r.stdout);
    let want = [
        "line 1 (the header): unknown column 'colour'",
        "line 2, column 'stress': '61.5' has no unit",
        "line 3: 6 fields, but the header has 5",
        "line 4, column 'stress': '-45 MPa' must be greater than zero",
        "line 5: no radius",
        "line 6, column 'mirror_mist': '0.7 MPa': 'MPa' is not a unit of length",
        "line 7: 3 fields, but the header has 5",
        "line 8, column 'stress': 'seventy' is not a number",
    ];
    for w in want {
        assert!(r.stderr.contains(w), "missing {w:?} in:\n{}", r.stderr);
    }
    assert!(r.stderr.contains("8 problems"), "{}", r.stderr);
}

#[test]
fn too_few_specimens_and_unreadable_input_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let p = csv(
        &dir,
        "stress,mirror_mist,mist_hackle\n60 MPa,1 mm,\n61 MPa,1.1 mm,1.3 mm\n62 MPa,0.9 mm,\n",
    );
    let r = run(&["calibrate", "--input", p.to_str().unwrap()]);
    assert_eq!(r.code, 1);
    assert!(
        r.stderr
            .contains("column 'mist_hackle': 1 specimen with a radius; at least 3"),
        "{}",
        r.stderr
    );
    let p = csv(&dir, "");
    let r = run(&["calibrate", "--input", p.to_str().unwrap()]);
    assert_eq!(r.code, 1);
    assert!(r.stderr.contains("the file is empty"), "{}", r.stderr);
    let missing = dir.path().join("nope.csv");
    let r = run(&["calibrate", "--input", missing.to_str().unwrap()]);
    assert_eq!(r.code, 1);
    assert!(r.stderr.contains("cannot read it"), "{}", r.stderr);
    let r = run(&["calibrate"]);
    assert_eq!(r.code, 2);
}

// ---- --save: the fitted constants into an own material

fn run_on(db: &std::path::Path, args: &[&str]) -> Run {
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "Odile Farrant")
        .env("SHARDLOG_KEY_DIR", db.with_extension("keys"))
        .output()
        .unwrap();
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn own_json(db: &std::path::Path, code: &str) -> serde_json::Value {
    let r = run_on(db, &["materials", "show", code, "--json"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    serde_json::from_str::<serde_json::Value>(&r.stdout).unwrap()["own_material"].clone()
}

#[test]
fn save_makes_an_own_material_with_provenance_and_the_data_digest() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("lab.db");
    assert_eq!(run_on(&db, &["init"]).code, 0);
    let p = csv(&dir, HAND);
    let input = p.to_str().unwrap();
    let r = run_on(
        &db,
        &[
            "calibrate",
            "--input",
            input,
            "--save",
            "lab_glass",
            "--from",
            "soda-lime",
            "--lab",
            "Tarn Lab",
        ],
    );
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stdout.contains("saved A_i = 1.929 MPa·√m ± 0.018 MPa·√m into own material lab_glass (revision 1), calibrated by Tarn Lab from 3 specimens on"),
        "{}",
        r.stdout
    );
    let own = own_json(&db, "lab_glass");
    assert_eq!(own["base"], "soda-lime");
    assert_eq!(own["revision"], 1);
    let a_i = &own["material"]["a_i"];
    // the hand arithmetic above: A = mean of σ·√R = 61 × √0.001 MPa·√m
    let expected = 61.0 * 0.001f64.sqrt() * MPA;
    assert!(
        (a_i["value"].as_f64().unwrap() - expected).abs() < 1e-6,
        "{a_i}"
    );
    assert_eq!(a_i["provenance"]["kind"], "calibrated");
    let digest = shardlog_core::canonical::sha256_hex(HAND.as_bytes());
    assert_eq!(a_i["provenance"]["sha256"], digest.as_str());
    let note = a_i["provenance"]["note"].as_str().unwrap();
    assert!(
        note.starts_with("calibrated by Tarn Lab from 3 specimens on 20"),
        "{note}"
    );
    // what the file did not fit keeps the library's value and source
    assert_eq!(own["material"]["a_o"]["value"], 2.2e6);
    assert_eq!(own["material"]["a_o"]["provenance"]["kind"], "published");

    // the saved constant is the one `mirror` uses: 61 × √0.001 MPa·√m / √(1 mm) = 61.0 MPa
    let r = run_on(
        &db,
        &[
            "mirror",
            "--material",
            "lab_glass",
            "--boundary",
            "mirror-mist",
            "--radius",
            "1mm",
        ],
    );
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("61.0 MPa"), "{}", r.stdout);
    assert_eq!(run_on(&db, &["verify"]).code, 0);
}

#[test]
fn save_updates_an_own_material_and_refuses_what_it_must() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("lab.db");
    assert_eq!(run_on(&db, &["init"]).code, 0);
    let p = csv(&dir, HAND);
    let input = p.to_str().unwrap().to_string();
    let save = |extra: &[&str]| {
        let mut args = vec!["calibrate", "--input", input.as_str()];
        args.extend_from_slice(extra);
        run_on(&db, &args)
    };
    // nothing to update and no base named
    let r = save(&["--save", "lab_glass"]);
    assert_eq!(r.code, 2);
    assert!(
        r.stderr
            .contains("there is no own material lab_glass; give --from"),
        "{}",
        r.stderr
    );
    // a library material is never changed
    let r = save(&["--save", "soda-lime"]);
    assert_eq!(r.code, 2);
    assert!(
        r.stderr
            .contains("soda-lime is a library material and cannot be changed"),
        "{}",
        r.stderr
    );
    assert_eq!(
        save(&["--save", "lab_glass", "--from", "borosilicate"]).code,
        0
    );
    // an update is the next revision; --from is for making one
    let r = save(&["--save", "lab_glass", "--lab", "Harrow bench"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert_eq!(own_json(&db, "lab_glass")["revision"], 2);
    assert_eq!(
        save(&["--save", "lab_glass", "--from", "soda-lime"]).code,
        2
    );

    // a set whose slope is not −½ is not saved unless accepted, and then it says so
    let mut text = String::from("stress,mirror_mist\n");
    for r in [0.5, 1.0, 2.0, 4.0] {
        text.push_str(&format!("{} MPa,{r} mm\n", 100.0 * f64::powf(r, -0.3)));
    }
    let bad = dir.path().join("slope.csv");
    std::fs::write(&bad, text).unwrap();
    let bad = bad.to_str().unwrap();
    let r = run_on(&db, &["calibrate", "--input", bad, "--save", "lab_glass"]);
    assert_eq!(r.code, 1);
    assert!(r.stderr.contains("nothing was saved"), "{}", r.stderr);
    assert_eq!(own_json(&db, "lab_glass")["revision"], 2);
    let r = run_on(
        &db,
        &[
            "calibrate",
            "--input",
            bad,
            "--save",
            "lab_glass",
            "--accept-slope",
        ],
    );
    assert_eq!(r.code, 0, "{}", r.stderr);
    let own = own_json(&db, "lab_glass");
    assert_eq!(own["revision"], 3);
    let note = own["material"]["a_i"]["provenance"]["note"]
        .as_str()
        .unwrap();
    assert!(note.contains("NOT consistent with −½"), "{note}");
    assert_eq!(run_on(&db, &["verify"]).code, 0);
}
