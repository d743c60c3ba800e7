//! Packaging: version, shell completions and the manual page come from the same argument
//! definitions as the parser, so they list the real subcommands.

use std::process::Command;

fn shardlog(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .args(args)
        .output()
        .expect("run shardlog");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn version_names_the_crate_version() {
    let (code, out, _) = shardlog(&["--version"]);
    assert_eq!(code, 0);
    assert_eq!(
        out.trim(),
        format!("shardlog {}", env!("CARGO_PKG_VERSION"))
    );
}

#[test]
fn completions_cover_every_shell_and_know_the_subcommands() {
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let (code, out, err) = shardlog(&["completions", shell]);
        assert_eq!(code, 0, "{shell}: {err}");
        for sub in ["mirror", "materials", "load", "weibull", "dispute"] {
            assert!(out.contains(sub), "{shell} completion lacks {sub}");
        }
    }
}

#[test]
fn unknown_shell_is_a_usage_error() {
    let (code, _, err) = shardlog(&["completions", "tcsh"]);
    assert_eq!(code, 2);
    assert!(err.contains("tcsh"), "{err}");
}

#[test]
fn manpage_is_roff_with_the_subcommands() {
    let (code, out, _) = shardlog(&["manpage"]);
    assert_eq!(code, 0);
    assert!(
        out.contains(".TH shardlog 1"),
        "{}",
        &out[..out.len().min(200)]
    );
    assert!(out.contains("mirror"));
    assert!(out.contains("\\-\\-db"), "roff escapes dashes");
}
