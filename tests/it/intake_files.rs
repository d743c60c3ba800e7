//! Files in and out: a bundle folder that hides a link, a FIFO or an endless file; attaching
//! a link; a database opened through a link; a dispute whose photos are missing; the modes
//! of what the tool writes; leftovers of a killed run.

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

use crate::support::report::*;

fn shardlog_cmd(db: &Path) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_shardlog"));
    c.env("SHARDLOG_USER", "test-runner").arg("--db").arg(db);
    c
}

/// Run the binary; a run that has not ended after two minutes has hung (a FIFO read, an
/// endless file): it is killed and the test fails saying so.
fn run(db: &Path, args: &[&str]) -> Output {
    let mut child = shardlog_cmd(db)
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let start = Instant::now();
    loop {
        if child.try_wait().unwrap().is_some() {
            return child.wait_with_output().unwrap();
        }
        if start.elapsed() > Duration::from_secs(120) {
            let _ = child.kill();
            panic!("shardlog {args:?} hung (killed after two minutes)");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn both(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let p = e.path();
        let t = to.join(e.file_name());
        if p.is_dir() {
            copy_dir(&p, &t);
        } else {
            std::fs::copy(&p, &t).unwrap();
        }
    }
}

fn mkfifo(p: &Path) {
    use std::os::unix::ffi::OsStrExt;
    let c = std::ffi::CString::new(p.as_os_str().as_bytes()).unwrap();
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
}

/// A demo database and a dispute bundle made from it.
fn bundle_setup(tmp: &Path) -> (PathBuf, PathBuf) {
    let demo = demo_db(tmp, 5, 4, false);
    let db = demo.db.clone();
    drop(demo.store);
    let bundle = tmp.join("claim");
    let o = run(
        &db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            bundle.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", both(&o));
    (db, bundle)
}

/// A listed file of the bundle other than bundle.json (a photo when there is one).
fn a_listed_file(bundle: &Path) -> String {
    let bf: serde_json::Value =
        serde_json::from_slice(&std::fs::read(bundle.join("bundle.json")).unwrap()).unwrap();
    let paths: Vec<String> = bf["files"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["path"].as_str().unwrap().to_string())
        .collect();
    paths
        .iter()
        .find(|p| p.contains('/'))
        .or(paths.first())
        .unwrap()
        .clone()
}

#[test]
fn verify_bundle_reads_only_regular_files_never_through_a_link() {
    let tmp = tempfile::tempdir().unwrap();
    let (db, bundle) = bundle_setup(tmp.path());
    let o = run(&db, &["verify", "--bundle", bundle.to_str().unwrap()]);
    assert!(o.status.success(), "the fresh bundle: {}", both(&o));
    let listed = a_listed_file(&bundle);

    // bundle.json a link to an endless file: refused at once, not read until memory runs out
    let zero = tmp.path().join("zero");
    copy_dir(&bundle, &zero);
    std::fs::remove_file(zero.join("bundle.json")).unwrap();
    std::os::unix::fs::symlink("/dev/zero", zero.join("bundle.json")).unwrap();
    let o = run(&db, &["verify", "--bundle", zero.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    assert!(both(&o).contains("symbolic link"), "{}", both(&o));

    // a listed file that is a FIFO: refused, never waited on
    let fifo = tmp.path().join("fifo");
    copy_dir(&bundle, &fifo);
    std::fs::remove_file(fifo.join(&listed)).unwrap();
    mkfifo(&fifo.join(&listed));
    let o = run(&db, &["verify", "--bundle", fifo.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    assert!(
        both(&o).contains(&listed) && both(&o).contains("FIFO"),
        "{}",
        both(&o)
    );

    // a listed file that is a link to a file with the very same bytes: still refused
    let linked = tmp.path().join("linked");
    copy_dir(&bundle, &linked);
    let outside = tmp.path().join("outside-copy");
    std::fs::rename(linked.join(&listed), &outside).unwrap();
    std::os::unix::fs::symlink(&outside, linked.join(&listed)).unwrap();
    let o = run(&db, &["verify", "--bundle", linked.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    assert!(both(&o).contains("symbolic link"), "{}", both(&o));
}

/// The first incident's reference of a database.
fn first_reference(db: &Path) -> String {
    let o = run(db, &["list", "--json", "--limit", "1"]);
    assert!(o.status.success(), "{}", both(&o));
    let rows: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    rows[0]["ref"].as_str().unwrap().to_string()
}

#[test]
fn attach_from_the_command_line_refuses_links_and_other_non_files() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 2, 1, false);
    let db = demo.db.clone();
    drop(demo.store);
    let reference = first_reference(&db);
    let before = shardlog::store::Store::open_existing(&db)
        .unwrap()
        .get(&reference)
        .unwrap()
        .attachments
        .len();
    let secret = tmp.path().join("private-notes.txt");
    std::fs::write(&secret, b"not evidence").unwrap();
    let link = tmp.path().join("origin-photo.png");
    std::os::unix::fs::symlink(&secret, &link).unwrap();
    let fifo = tmp.path().join("pipe.png");
    mkfifo(&fifo);
    let photo = tmp.path().join("origin-2.png");
    std::fs::write(&photo, fixture("mirror-origin.png")).unwrap();
    // a link: refused, naming its target; nothing attached, not even the good file before it
    let o = run(
        &db,
        &[
            "attach",
            &reference,
            photo.to_str().unwrap(),
            link.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    assert!(
        both(&o).contains("symbolic link") && both(&o).contains("private-notes.txt"),
        "{}",
        both(&o)
    );
    let o = run(&db, &["attach", &reference, fifo.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    assert!(both(&o).contains("FIFO"), "{}", both(&o));
    let o = run(&db, &["attach", &reference, tmp.path().to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    assert!(both(&o).contains("folder"), "{}", both(&o));
    let s = shardlog::store::Store::open_existing(&db).unwrap();
    assert_eq!(s.get(&reference).unwrap().attachments.len(), before);
    drop(s);
    // a regular file attaches, with its caption, and the database still verifies
    let o = run(
        &db,
        &[
            "attach",
            &reference,
            photo.to_str().unwrap(),
            "--caption",
            "origin, second view",
        ],
    );
    assert!(o.status.success(), "{}", both(&o));
    assert!(both(&o).contains("attached origin-2.png"), "{}", both(&o));
    let s = shardlog::store::Store::open_existing(&db).unwrap();
    let inc = s.get(&reference).unwrap();
    assert_eq!(inc.attachments.len(), before + 1);
    assert_eq!(inc.attachments[before].caption, "origin, second view");
    assert!(s.verify().unwrap().ok());
    // the store's own entry point refuses a link too (the interface's `a` goes through it)
    let mut s = s;
    let e = s
        .add_attachment(
            &reference,
            &link,
            "",
            &shardlog::store::Stamp::new("t", chrono::Utc::now()),
        )
        .unwrap_err();
    assert!(e.to_string().contains("symbolic link"), "{e}");
}

#[test]
fn a_database_opened_through_a_link_keeps_its_attachments() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 5, 4, false);
    let db = demo.db.clone();
    drop(demo.store);
    let elsewhere = tmp.path().join("elsewhere");
    std::fs::create_dir(&elsewhere).unwrap();
    let link = elsewhere.join("bench.db");
    std::os::unix::fs::symlink(&db, &link).unwrap();
    let o = run(&link, &["verify"]);
    assert!(o.status.success(), "verify through a link: {}", both(&o));
    let bak = tmp.path().join("bak.db");
    let o = run(&link, &["backup", bak.to_str().unwrap()]);
    assert!(o.status.success(), "backup through a link: {}", both(&o));
    let o = run(&bak, &["verify"]);
    assert!(o.status.success(), "the backup: {}", both(&o));
    let out = tmp.path().join("claim");
    let o = run(
        &link,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "dispute through a link: {}", both(&o));
    let photos = std::fs::read_dir(&out)
        .unwrap()
        .flatten()
        .filter(|e| e.path().is_dir())
        .flat_map(|d| std::fs::read_dir(d.path()).unwrap().flatten())
        .filter(|e| e.path().extension().is_some_and(|x| x == "png"))
        .count();
    assert!(photos > 0, "the bundle through a link has no photos");
}

#[test]
fn dispute_refuses_missing_photos_unless_allowed_and_then_the_cover_names_them() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 5, 4, false);
    let db = demo.db.clone();
    drop(demo.store);
    let mut files = db.as_os_str().to_os_string();
    files.push(".files");
    let files = PathBuf::from(files);
    let gone: Vec<String> = std::fs::read_dir(&files)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    assert!(!gone.is_empty(), "the demo has photos");
    std::fs::rename(&files, tmp.path().join("moved-away")).unwrap();
    let out = tmp.path().join("claim");
    let o = run(
        &db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    let text = both(&o);
    assert!(text.contains("--allow-missing-attachments"), "{text}");
    assert!(!out.exists(), "a refused bundle left a folder");
    // each missing file of the claimed supplier's incidents is named
    let named = gone.iter().filter(|h| text.contains(h.as_str())).count();
    assert!(named > 0, "{text}");
    let o = run(
        &db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            out.to_str().unwrap(),
            "--allow-missing-attachments",
        ],
    );
    assert!(o.status.success(), "{}", both(&o));
    let cover = std::fs::read_to_string(out.join("cover.html")).unwrap();
    assert!(
        cover.contains("Attachments not included"),
        "the cover does not say"
    );
    assert!(gone.iter().any(|h| cover.contains(h.as_str())));
    // with the files back in place, the bundle still checks against the records
    std::fs::rename(tmp.path().join("moved-away"), &files).unwrap();
    let o = run(&db, &["verify", "--bundle", out.to_str().unwrap()]);
    assert!(o.status.success(), "{}", both(&o));
}

/// Hidden leftovers of ours in `dir`.
fn partials(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.') && n.contains(".partial-"))
        .collect()
}

#[test]
fn a_killed_demo_leaves_a_partial_copy_that_the_next_run_removes() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("fleet.db");
    let scratch = tmp.path().join("scratch.db");
    let mut child = shardlog_cmd(&scratch)
        .args([
            "demo",
            "--out",
            out.to_str().unwrap(),
            "--incidents",
            "200000",
        ])
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    // kill it (SIGKILL) as soon as its temporary copy is on the disk
    let start = Instant::now();
    while partials(tmp.path()).is_empty() {
        assert!(
            child.try_wait().unwrap().is_none(),
            "the demo ended before it could be killed"
        );
        assert!(
            start.elapsed() < Duration::from_secs(120),
            "no partial copy appeared"
        );
        std::thread::sleep(Duration::from_millis(5));
    }
    child.kill().unwrap();
    child.wait().unwrap();
    assert!(!out.exists());
    let left = partials(tmp.path());
    assert!(!left.is_empty());
    let o = run(
        &scratch,
        &["demo", "--out", out.to_str().unwrap(), "--incidents", "20"],
    );
    assert!(o.status.success(), "{}", both(&o));
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    for l in &left {
        assert!(err.contains(l.as_str()), "{l} not named in: {err}");
    }
    assert!(
        err.contains("removed the leftover of an interrupted run"),
        "{err}"
    );
    assert!(
        partials(tmp.path()).is_empty(),
        "{:?}",
        partials(tmp.path())
    );
}

#[test]
fn backup_and_dispute_remove_the_leftovers_of_a_run_that_is_gone() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 3, 2, false);
    let db = demo.db.clone();
    drop(demo.store);
    let out = tmp.path().join("out");
    std::fs::create_dir(&out).unwrap();
    // what a killed backup and a killed dispute leave, under the name of a process that
    // cannot exist (above the largest process id Linux hands out); simulated, not killed
    let dead = 2_147_483_000u32;
    let bak_left = out.join(format!(".bak.db.partial-{dead}-0"));
    std::fs::write(&bak_left, vec![7u8; 300_000]).unwrap();
    let bak_files_left = out.join(format!(".bak.db.partial-{dead}-0.files"));
    std::fs::create_dir(&bak_files_left).unwrap();
    std::fs::write(bak_files_left.join("x"), b"photo").unwrap();
    let claim_left = out.join(format!(".claim.partial-{dead}"));
    std::fs::create_dir_all(claim_left.join("incidents")).unwrap();
    std::fs::write(claim_left.join("incidents/x.pdf"), b"%PDF").unwrap();
    // a leftover of a run still going (this test's own process) is kept
    let live = out.join(format!(".other.db.partial-{}-0", std::process::id()));
    std::fs::write(&live, b"in use").unwrap();

    let o = run(&db, &["backup", out.join("bak2.db").to_str().unwrap()]);
    assert!(o.status.success(), "{}", both(&o));
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    assert!(
        err.contains(".bak.db.partial-") && err.contains("MB"),
        "{err}"
    );
    assert!(!bak_left.exists() && !bak_files_left.exists() && !claim_left.exists());
    assert!(live.exists());
    std::fs::create_dir_all(claim_left.join("incidents")).unwrap();
    let o = run(
        &db,
        &[
            "dispute",
            "--supplier",
            CLAIMED,
            "-o",
            out.join("claim").to_str().unwrap(),
        ],
    );
    assert!(o.status.success(), "{}", both(&o));
    assert!(both(&o).contains(".claim.partial-"), "{}", both(&o));
    assert!(!claim_left.exists());
    assert!(live.exists());
}

/// The permission bits of a path.
fn mode(p: &Path) -> u32 {
    use std::os::unix::fs::PermissionsExt;
    std::fs::symlink_metadata(p).unwrap().permissions().mode() & 0o777
}

/// Run the binary under umask 000, the widest a user could set.
fn run_wide_open(db: &Path, args: &[&str]) -> Output {
    let mut c = Command::new("sh");
    c.arg("-c")
        .arg("umask 000; exec \"$0\" \"$@\"")
        .arg(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "test-runner");
    c.output().unwrap()
}

/// Every file and folder under `root`, with its mode.
fn modes_under(root: &Path) -> Vec<(PathBuf, u32)> {
    let mut out = vec![(root.to_path_buf(), mode(root))];
    if root.is_dir() {
        for e in std::fs::read_dir(root).unwrap().flatten() {
            out.extend(modes_under(&e.path()));
        }
    }
    out
}

#[test]
fn what_the_tool_writes_has_an_explicit_mode_whatever_the_umask() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 3, 2, false);
    let db = demo.db.clone();
    let reference = demo.claimed[0].clone();
    drop(demo.store);
    let out = tmp.path().join("out");
    std::fs::create_dir(&out).unwrap();
    let p = |n: &str| out.join(n).to_str().unwrap().to_string();
    for args in [
        vec![
            "export".to_string(),
            "--format".into(),
            "json".into(),
            "-o".into(),
            p("all.json"),
        ],
        vec![
            "export".into(),
            "--format".into(),
            "csv".into(),
            "-o".into(),
            p("all.csv"),
        ],
        vec![
            "report".into(),
            reference.clone(),
            "--format".into(),
            "md".into(),
            "-o".into(),
            p("one.md"),
        ],
        vec![
            "dispute".into(),
            "--supplier".into(),
            CLAIMED.into(),
            "-o".into(),
            p("claim"),
        ],
        vec!["backup".into(), p("bak.db")],
    ] {
        let a: Vec<&str> = args.iter().map(String::as_str).collect();
        let o = run_wide_open(&db, &a);
        assert!(o.status.success(), "{args:?}: {}", both(&o));
    }
    // copies of the records and photos: owner-only
    assert_eq!(mode(&out.join("all.json")), 0o600);
    assert_eq!(mode(&out.join("all.csv")), 0o600);
    for (path, m) in modes_under(&out.join("claim"))
        .into_iter()
        .chain(modes_under(&out.join("bak.db")))
        .chain(modes_under(&out.join("bak.db.files")))
    {
        let want = if path.is_dir() { 0o700 } else { 0o600 };
        assert_eq!(m, want, "{}: {m:o}", path.display());
    }
    // one incident's summary, to hand on: readable, writable by its owner only
    assert_eq!(mode(&out.join("one.md")), 0o644);
    // nothing anywhere is group- or world-writable
    for (path, m) in modes_under(&out) {
        assert_eq!(m & 0o022, 0, "{} is {m:o}", path.display());
    }
}

#[test]
fn commands_that_only_read_work_when_nothing_can_be_written() {
    // a file-size limit of zero blocks (ulimit -f 0, SIGXFSZ ignored) refuses every write
    // that would grow any file, the way a full disk does (the error differs: EFBIG, not
    // ENOSPC); the database was closed cleanly, so no write is pending in its WAL
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 4, 3, false);
    let db = demo.db.clone();
    let reference = demo.claimed[0].clone();
    drop(demo.store);
    let limited = |args: &[&str]| -> Output {
        Command::new("sh")
            .arg("-c")
            .arg("trap '' XFSZ; ulimit -f 0; exec \"$0\" \"$@\"")
            .arg(env!("CARGO_BIN_EXE_shardlog"))
            .arg("--db")
            .arg(&db)
            .args(args)
            .env("SHARDLOG_USER", "test-runner")
            .output()
            .unwrap()
    };
    for args in [
        &["list"][..],
        &["show", &reference][..],
        &["export", "--format", "json"][..],
        &["export", "--format", "csv"][..],
        &["verify"][..],
        &["stats"][..],
    ] {
        let o = limited(args);
        assert!(o.status.success(), "{args:?} on a full disk: {}", both(&o));
        assert!(!o.stdout.is_empty(), "{args:?} printed nothing");
    }
    // a change is still refused, with one line, and the records stay as they were
    let o = limited(&["attach", &reference, db.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1), "{}", both(&o));
    let o = run(&db, &["verify"]);
    assert!(o.status.success(), "{}", both(&o));
}
