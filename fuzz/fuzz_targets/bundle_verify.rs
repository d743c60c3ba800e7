//! The dispute-bundle verifier on hostile folders: the fuzz input becomes bundle.json (and,
//! after a 0xFF 0x00 separator, a second file named by the bundle's first listed path when
//! that is a plain name). Properties: never panics; a folder whose bundle.json is not a
//! bundle is never reported intact; every problem is a non-empty sentence.
//!
//! The last byte of an input (when there are two or more) shapes the folder further: bit 0
//! makes the listed file a symbolic link to bundle.json, bit 1 adds a link to a folder
//! outside, bit 2 makes the listed file sparse and past the size limit, bit 3 checks the
//! signature against a key taken from the input (an invented fingerprint), bit 4 makes the
//! listed file a named pipe (FIFO), bit 5 makes bundle.json a link to /dev/zero, bit 6 makes
//! the listed file a link to /dev/zero. None of them may hang the verifier or read past its
//! size limit, and a folder with any of them is never reported intact.
#![no_main]

use std::path::PathBuf;

use libfuzzer_sys::fuzz_target;
use shardlog::report::bundle;

thread_local! {
    static DIR: PathBuf = {
        let d = std::env::temp_dir().join(format!("shardlog-fuzz-bundle-{}", std::process::id()));
        let _ = std::fs::create_dir_all(&d);
        d
    };
}

fuzz_target!(|data: &[u8]| {
    let (shape, data) = match data.split_last() {
        Some((s, rest)) if !rest.is_empty() => (*s, rest),
        _ => (0, data),
    };
    DIR.with(|dir| {
        // a clean folder for every input
        let _ = std::fs::remove_dir_all(dir);
        std::fs::create_dir_all(dir).expect("temp folder");
        let split = data.windows(2).position(|w| w == [0xFF, 0x00]);
        let (bj, rest) = match split {
            Some(at) => (&data[..at], Some(&data[at + 2..])),
            None => (data, None),
        };
        std::fs::write(dir.join("bundle.json"), bj).expect("write bundle.json");
        let parsed: Option<serde_json::Value> = serde_json::from_slice(bj).ok();
        if let (Some(rest), Some(v)) = (rest, &parsed) {
            if let Some(name) = v["files"][0]["path"].as_str() {
                if !name.is_empty()
                    && !name.contains("..")
                    && !name.starts_with('/')
                    && name.len() < 100
                {
                    let p = dir.join(name);
                    if let Some(parent) = p.parent() {
                        let _ = std::fs::create_dir_all(parent);
                    }
                    let _ = std::fs::write(&p, rest);
                    hostile_shapes(dir, &p, shape);
                }
            }
        }
        #[cfg(unix)]
        if shape & 32 != 0 {
            let _ = std::fs::remove_file(dir.join("bundle.json"));
            let _ = std::os::unix::fs::symlink("/dev/zero", dir.join("bundle.json"));
        }
        let key = (shape & 8 != 0)
            .then(|| bundle::ExpectedKey::parse("0123-4567-89ab-cdef-0123-4567-89ab-cdef"))
            .flatten();
        match bundle::verify_bundle_with(dir, None, key.as_ref()) {
            Ok(check) => {
                for p in &check.problems {
                    assert!(!p.trim().is_empty());
                }
                if parsed.as_ref().is_none_or(|v| !v.is_object()) {
                    assert!(!check.ok(), "a folder without a bundle passed: {check:?}");
                }
                // no bundle made here is signed with that invented key
                assert!(key.is_none() || !check.ok(), "passed as signed: {check:?}");
                // bundle.json that is not a regular file is never read as a bundle
                assert!(shape & 32 == 0 || !check.ok(), "/dev/zero passed: {check:?}");
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
    });
});

/// The listed file at `p` made hostile as `shape` says (links and sizes; see the top).
fn hostile_shapes(dir: &std::path::Path, p: &std::path::Path, shape: u8) {
    #[cfg(unix)]
    {
        if shape & 1 != 0 {
            let _ = std::fs::remove_file(p);
            let _ = std::os::unix::fs::symlink(dir.join("bundle.json"), p);
        }
        if shape & 2 != 0 {
            let _ = std::os::unix::fs::symlink(std::env::temp_dir(), dir.join("outside"));
        }
    }
    #[cfg(unix)]
    if shape & 1 == 0 {
        if shape & 16 != 0 {
            let _ = std::fs::remove_file(p);
            let _ = std::process::Command::new("mkfifo").arg(p).status();
        } else if shape & 64 != 0 {
            let _ = std::fs::remove_file(p);
            let _ = std::os::unix::fs::symlink("/dev/zero", p);
        }
    }
    if shape & (4 | 16 | 64) == 4 && shape & 1 == 0 {
        if let Ok(f) = std::fs::OpenOptions::new().write(true).open(p) {
            let _ = f.set_len(600 * 1024 * 1024);
        }
    }
}
