//! The dispute-bundle verifier on hostile folders: the fuzz input becomes bundle.json (and,
//! after a 0xFF 0x00 separator, a second file named by the bundle's first listed path when
//! that is a plain name). Properties: never panics; a folder whose bundle.json is not a
//! bundle is never reported intact; every problem is a non-empty sentence.
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
                    let _ = std::fs::write(p, rest);
                }
            }
        }
        match bundle::verify_bundle(dir, None) {
            Ok(check) => {
                for p in &check.problems {
                    assert!(!p.trim().is_empty());
                }
                if parsed.as_ref().is_none_or(|v| !v.is_object()) {
                    assert!(!check.ok(), "a folder without a bundle passed: {check:?}");
                }
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
    });
});
