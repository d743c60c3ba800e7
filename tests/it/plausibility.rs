//! Values a person can mistype: each quantity has a physical range (the table beside the
//! parser, core/src/units/range.rs) and a value outside it is refused with the range; a flaw
//! depth ratio beyond the fitted range of its equations is warned whether it was given or
//! solved.

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

#[test]
fn a_temperature_of_1e308_is_refused_with_the_range() {
    // before: accepted, "edge tension: 6.30e299 MPa"
    let (code, out, err) = run(&["load", "thermal", "--delta-t", "1e308°C"]);
    assert_eq!(code, 2, "{out}");
    assert!(err.contains("--delta-t"), "{err}");
    assert!(err.contains("up to 2000 K"), "{err}");
    // a real temperature difference still passes
    let (code, out, _) = run(&["load", "thermal", "--delta-t", "40K"]);
    assert_eq!(code, 0);
    assert!(out.contains("MPa"));
}

#[test]
fn absurd_lengths_speeds_and_stresses_are_refused_with_the_range() {
    for (args, flag, range) in [
        (
            vec!["mirror", "--material", "soda-lime", "--radius", "1e300mm"],
            "--radius",
            "1000 m",
        ),
        (
            vec!["load", "impact", "--mass", "1kg", "--speed", "1e9m/s"],
            "--speed",
            "10000 m/s",
        ),
        (
            vec![
                "load",
                "plate",
                "--shape",
                "circular",
                "--span",
                "1m",
                "--thickness",
                "5mm",
                "--edges",
                "clamped",
                "--pressure",
                "1e200GPa",
            ],
            "--pressure",
            "100 GPa",
        ),
    ] {
        let (code, _, err) = run(&args);
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.contains(flag) && err.contains(range), "{args:?}: {err}");
        assert!(err.contains("physical range"), "{err}");
    }
}

#[test]
fn a_given_depth_ratio_beyond_0_8_is_warned_like_a_solved_one() {
    // Newman & Raju, Eng. Fract. Mech. 15 (1981) 185: the equations were fitted for
    // a/t < 0.8. A solved a/t beyond it was already warned; a given one was not.
    let warned = |ratio: &str| {
        let (code, out, err) = run(&[
            "mirror",
            "--material",
            "soda-lime",
            "--radius",
            "1mm",
            "--depth-ratio",
            ratio,
        ]);
        assert_eq!(code, 0, "{err}");
        out.contains("beyond 0.8 of the thickness")
    };
    assert!(warned("0.9"));
    assert!(warned("0.99"));
    assert!(!warned("0.8"));
    assert!(!warned("0.5"));
    let (_, out, _) = run(&[
        "mirror",
        "--material",
        "soda-lime",
        "--radius",
        "10mm",
        "--thickness",
        "0.3mm",
    ]);
    assert!(out.contains("deeper than 0.8 of the thickness"), "{out}");
}
