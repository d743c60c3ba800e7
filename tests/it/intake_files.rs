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
