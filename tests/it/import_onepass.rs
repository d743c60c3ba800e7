//! CSV import in one pass: every problem of the file at once, named by line and CSV column;
//! lookup cells by code or label in any case; results computed from the readings as the
//! bench computes them; possible duplicates refused unless allowed.

use chrono::{DateTime, Utc};
use shardlog::store::exchange::ImportOptions;
use shardlog::store::model::Stamp;
use shardlog::store::Store;
use shardlog_core::fracture::{self, materials, AnalysisInput, Boundary, Temper};

fn stamp() -> Stamp {
    Stamp::new(
        "Tomasz Eklund-Reyes",
        DateTime::parse_from_rfc3339("2027-02-10T08:00:00Z")
            .unwrap()
            .with_timezone(&Utc),
    )
}

const HEADER: &str = "found_on,broken_on,asset,position,material,temper,thickness,status,\
origin_location,magnification,mirror_mist,flaw_depth,stress_mpa,cause,confidence,notes";

fn csv(rows: &[&str]) -> Vec<u8> {
    let mut s = String::from(HEADER);
    s.push('\n');
    for r in rows {
        s.push_str(r);
        s.push('\n');
    }
    s.into_bytes()
}

#[test]
fn ten_different_mistakes_are_all_reported_at_once_by_line_and_column() {
    let mut s = Store::open_in_memory().unwrap();
    let bytes = csv(&[
        // line 2: good
        "2027-01-05,,tram 12,door left,soda_lime,annealed,6 mm,reported,edge,,1.1 mm,,,,,",
        // line 3: a date that does not exist
        "2027-13-01,,tram 12,door right,,,,reported,,,,,,,,",
        // line 4: broken_on not a date; thickness in an unknown unit
        "2027-01-06,yesterday,tram 13,door,,,6 furlongs,reported,,,,,,,,",
        // line 5: a reading without a number; a negative magnification
        "2027-01-07,,tram 14,door,,,,reported,,-5,abc mm,,,,,",
        // line 6: unknown status; unknown origin location
        "2027-01-08,,tram 15,door,,,,lost in post,middle,,,,,,,",
        // line 7: unknown cause; confidence outside the list
        "2027-01-09,,tram 16,door,,,,reported,,,,,,sabotage,certain,",
        // line 8: a flaw depth that is not a length; a stress that is not a number
        "2027-01-10,,tram 17,door,,,,reported,,,,deep,fast,,,",
        // line 9: a temper that is not a class
        "2027-01-11,,tram 18,door,soda_lime,glowing,,reported,,,,,,,,",
        // line 10: too few fields
        "2027-01-12,,tram 19",
    ]);
    let rej = s
        .import_bytes("mistakes.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .expect_err("the file is refused");
    let all: Vec<String> = rej.problems.iter().map(|p| p.to_string()).collect();
    let text = all.join("\n");
    let expected = [
        "line 3, column found_on",
        "line 4, column broken_on",
        "line 4, column thickness",
        "line 5, column mirror_mist",
        "line 5, column magnification",
        "line 6, column status",
        "line 6, column origin_location",
        "line 7, column cause",
        "line 7, column confidence",
        "line 8, column flaw_depth",
        "line 8, column stress_mpa",
        "line 9, column temper",
        "line 10",
    ];
    for e in expected {
        assert!(
            all.iter().any(|p| p.starts_with(e)),
            "missing '{e}' in:\n{text}"
        );
    }
    // every problem names a line; none names a model path
    for p in &all {
        assert!(p.starts_with("line "), "{p}");
        assert!(
            !p.contains("cause.category") && !p.contains("pattern.") && !p.contains("plies["),
            "{p}"
        );
    }
    // in line order
    let lines: Vec<usize> = rej
        .problems
        .iter()
        .map(|p| {
            p.place["line ".len()..]
                .split(|c: char| !c.is_ascii_digit())
                .next()
                .unwrap()
                .parse()
                .unwrap()
        })
        .collect();
    assert!(lines.windows(2).all(|w| w[0] <= w[1]), "{text}");
    // an unknown code lists what the column takes, labels too
    let status = all
        .iter()
        .find(|p| p.starts_with("line 6, column status"))
        .unwrap();
    assert!(
        status.contains("received (specimen received)") && status.contains("closed"),
        "{status}"
    );
    let cause = all
        .iter()
        .find(|p| p.starts_with("line 7, column cause"))
        .unwrap();
    assert!(cause.contains("thermal (thermal stress)"), "{cause}");
    assert_eq!(s.incident_count().unwrap(), 0, "nothing written");
}

#[test]
fn labels_are_read_as_codes_in_any_case() {
    let mut s = Store::open_in_memory().unwrap();
    let bytes = csv(&[
        "2027-01-05,,tram 12,door left,Soda-Lime,Fully Tempered,6 mm,Specimen Received,EDGE,,,,,Thermal Stress,PROBABLE,",
    ]);
    s.import_bytes("labels.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap_or_else(|r| panic!("{r}"));
    let inc = s
        .get(&s.matching_ids(&Default::default()).unwrap()[0])
        .unwrap();
    assert_eq!(inc.status, "received");
    assert_eq!(inc.pattern.origin_location.as_deref(), Some("edge"));
    let cause = inc.cause.unwrap();
    assert_eq!(cause.category, "thermal");
    assert_eq!(cause.confidence, "probable");
    let ply = &inc.glass.plies[0];
    assert_eq!(ply.temper.as_deref(), Some("fully_tempered"));
    assert_eq!(ply.material.as_deref(), Some("soda_lime"));
}

#[test]
fn imported_readings_get_the_benchs_results() {
    let mut s = Store::open_in_memory().unwrap();
    // an edge origin in 6 mm fully tempered soda-lime, two mirror–mist readings; the file's
    // own stress figure (99) is not what the readings give and is replaced
    let bytes = csv(&[
        "2027-01-05,,tram 12,door left,soda_lime,fully_tempered,6 mm,reported,edge,,1.2 mm; 1.3 mm,,99,,,",
    ]);
    s.import_bytes("readings.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap_or_else(|r| panic!("{r}"));
    let inc = s
        .get(&s.matching_ids(&Default::default()).unwrap()[0])
        .unwrap();
    let (_, result) = inc.current_result().expect("a computed result");
    // the same input the bench builds: edge origin → edge crack
    let mut input = AnalysisInput::new(materials::find("soda-lime").unwrap())
        .with_readings(Boundary::MirrorMist, &[1.2e-3, 1.3e-3]);
    input.temper = Some(Temper::FullyTempered);
    input.thickness_m = Some(6e-3);
    input.flaw = Some(fracture::FlawGeometry::EdgeCrack);
    let core = fracture::analyze(&input).unwrap();
    let stress = result.stress_pa.unwrap();
    assert!(
        (stress - core.stress_pa).abs() <= 1e-9 * core.stress_pa,
        "{stress}"
    );
    assert!(
        (result.applied_stress_pa.unwrap() - core.applied_stress_pa).abs()
            <= 1e-9 * core.applied_stress_pa.abs()
    );
    assert_ne!(result.stress_pa, Some(99e6));
    let flaw = result.flaw_size_m.unwrap();
    assert!(
        (flaw - core.flaw.as_ref().unwrap().size_m).abs() <= 1e-15,
        "{flaw}"
    );
}

#[test]
fn a_possible_duplicate_is_refused_unless_allowed() {
    let mut s = Store::open_in_memory().unwrap();
    let first = csv(&["2027-01-05,,tram 12,door left,,,,reported,,,,,,,,"]);
    s.import_bytes("a.csv", &first, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap();
    // the same asset, position (other case and spacing) and date; and twice in the file
    let again = csv(&[
        "2027-01-05,,TRAM 12,Door  Left,,,,reported,,,,,,,,",
        "2027-01-09,,tram 12,roof,,,,reported,,,,,,,,",
        "2027-01-09,,tram 12,roof,,,,reported,,,,,,,,",
    ]);
    let rej = s
        .import_bytes("b.csv", &again, ImportOptions::default(), &stamp())
        .unwrap()
        .expect_err("duplicates refused");
    let text = rej.to_string();
    assert_eq!(rej.problems.len(), 2, "{text}");
    assert!(rej.problems[0].place == "line 2", "{text}");
    assert!(rej.problems[0].message.contains("BR-270105-"), "{text}");
    assert!(
        rej.problems[0].message.contains("--allow-duplicates"),
        "{text}"
    );
    assert!(
        rej.problems[1].message.contains("line 3 of this file"),
        "{text}"
    );
    assert_eq!(s.incident_count().unwrap(), 1);
    let allow = ImportOptions {
        allow_duplicates: true,
        ..ImportOptions::default()
    };
    let sum = s
        .import_bytes("b.csv", &again, allow, &stamp())
        .unwrap()
        .unwrap();
    assert_eq!(sum.incidents, 3);
}
