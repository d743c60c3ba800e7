//! The layers point one way, and the code stays in pieces a reader can hold.
//!
//! - `core/` (shardlog-core) depends on no I/O crate and imports nothing of the program above it;
//!   it reads no file, clock or environment.
//! - `src/app/` knows neither the terminal nor the command line: no ratatui, crossterm or
//!   ratatui-textarea, no `crate::tui`, no `crate::cli`.
//! - Nothing outside `src/store/` names rusqlite or postgres.
//! - No import circle between two modules that are not one inside the other.
//! - No source file over 1,000 lines, no function over 150 lines (tables excepted).
//!
//! Each rule reads the source text: a rule broken names the file and line.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Every `.rs` file under `dir`, sorted.
fn rust_files(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        let entries = std::fs::read_dir(&d).unwrap_or_else(|e| panic!("{}: {e}", d.display()));
        for e in entries {
            let p = e.expect("a directory entry").path();
            if p.is_dir() {
                stack.push(p);
            } else if p.extension().is_some_and(|x| x == "rs") {
                out.push(p);
            }
        }
    }
    out.sort();
    out
}

fn rel(p: &Path) -> String {
    p.strip_prefix(root()).unwrap_or(p).display().to_string()
}

/// Lines of code only: `//` comments (doc comments too) removed, string contents kept.
fn code_lines(text: &str) -> Vec<(usize, String)> {
    text.lines()
        .enumerate()
        .map(|(i, l)| {
            let code = match l.find("//") {
                // a `//` inside a string literal ("http://…") is not a comment
                Some(at) if l[..at].matches('"').count() % 2 == 0 => &l[..at],
                _ => l,
            };
            (i + 1, code.to_string())
        })
        .collect()
}

/// Lines (number, text) of `files` that contain any of `needles` as code.
fn offending(files: &[PathBuf], needles: &[&str]) -> Vec<String> {
    let mut hits = Vec::new();
    for f in files {
        let text = std::fs::read_to_string(f).expect("a readable source file");
        for (n, line) in code_lines(&text) {
            for needle in needles {
                if line.contains(needle) {
                    hits.push(format!("{}:{n}: {needle}: {}", rel(f), line.trim()));
                }
            }
        }
    }
    hits
}

#[test]
fn the_core_crate_depends_on_no_io_crate() {
    let manifest =
        std::fs::read_to_string(root().join("core/Cargo.toml")).expect("core/Cargo.toml");
    let mut in_deps = false;
    let mut deps = Vec::new();
    for line in manifest.lines() {
        let t = line.trim();
        if t.starts_with('[') {
            in_deps = t == "[dependencies]";
            continue;
        }
        if in_deps && !t.is_empty() && !t.starts_with('#') {
            let name = t.split(['=', ' ']).next().unwrap_or("").trim();
            deps.push(name.to_string());
        }
    }
    // What a pure library needs: data (serde), dates without a clock, error derives, widths.
    let allowed = [
        "serde",
        "serde_json",
        "chrono",
        "thiserror",
        "unicode-width",
        "sha2",
    ];
    let extra: Vec<&String> = deps
        .iter()
        .filter(|d| !allowed.contains(&d.as_str()))
        .collect();
    assert!(
        extra.is_empty(),
        "core/Cargo.toml depends on {extra:?}; the core takes no I/O crate (allowed: {allowed:?})"
    );
    assert!(deps.len() >= 3, "read the core's dependencies: {deps:?}");
    assert!(
        !manifest.contains("\"clock\""),
        "the core's chrono has no clock feature: now is passed in"
    );
}

#[test]
fn the_core_reads_no_file_clock_or_environment_and_imports_nothing_above_it() {
    let files = rust_files(&root().join("core/src"));
    assert!(files.len() > 10, "found the core's files");
    let hits = offending(
        &files,
        &[
            "shardlog::",
            "std::fs",
            "std::net",
            "std::process",
            "std::env",
            "std::io",
            "std::time",
            "SystemTime",
            "Instant::now",
            "Utc::now",
            "Local::now",
            "println!",
            "eprintln!",
            "rusqlite",
            "ratatui",
            "crossterm",
        ],
    );
    assert!(
        hits.is_empty(),
        "the core must stay pure:\n{}",
        hits.join("\n")
    );
}

#[test]
fn the_app_knows_neither_the_terminal_nor_the_command_line() {
    let files = rust_files(&root().join("src/app"));
    assert!(files.len() > 3, "found the app's files");
    let hits = offending(
        &files,
        &[
            "ratatui",
            "crossterm",
            "crate::tui",
            "crate::cli",
            "super::tui",
            "super::cli",
        ],
    );
    // Files still being moved off the terminal crates; the list only shrinks.
    let pending: &[&str] = &[];
    let hits: Vec<String> = hits
        .into_iter()
        .filter(|h| !pending.iter().any(|p| h.starts_with(p)))
        .collect();
    assert!(
        hits.is_empty(),
        "src/app names a layer above it:\n{}",
        hits.join("\n")
    );
}

#[test]
fn only_the_store_names_the_database_crates() {
    let mut files = rust_files(&root().join("src"));
    files.extend(rust_files(&root().join("core/src")));
    let files: Vec<PathBuf> = files
        .into_iter()
        .filter(|f| !f.starts_with(root().join("src/store")))
        .collect();
    let hits = offending(&files, &["rusqlite", "postgres::", "use postgres"]);
    assert!(
        hits.is_empty(),
        "only src/store talks to a database:\n{}",
        hits.join("\n")
    );
}

#[test]
fn only_the_fleet_side_of_the_store_names_postgres() {
    let files: Vec<PathBuf> = rust_files(&root().join("src/store"))
        .into_iter()
        .filter(|f| !f.starts_with(root().join("src/store/fleet")))
        .collect();
    assert!(files.len() > 10, "found the store's files");
    let hits = offending(
        &files,
        &["postgres::", "use postgres", "tokio_postgres", "rustls"],
    );
    assert!(
        hits.is_empty(),
        "PostgreSQL is reached only from src/store/fleet:\n{}",
        hits.join("\n")
    );
    let fleet = rust_files(&root().join("src/store/fleet"));
    assert!(
        !offending(&fleet, &["use postgres"]).is_empty(),
        "src/store/fleet is where the PostgreSQL client is used"
    );
}

/// The module path of a source file: `src/store/audit/chain.rs` → `crate::store::audit::chain`.
fn module_of(file: &Path, src: &Path) -> Vec<String> {
    let r = file
        .strip_prefix(src)
        .expect("a file under its source folder");
    let mut parts: Vec<String> = r
        .iter()
        .map(|c| c.to_string_lossy().trim_end_matches(".rs").to_string())
        .collect();
    if matches!(
        parts.last().map(String::as_str),
        Some("mod" | "lib" | "main")
    ) {
        parts.pop();
    }
    parts
}

/// Paths like `crate::a::b`, `super::c`, `self::d` in a line, with `use x::{y, z}` groups
/// expanded one level.
fn referenced_paths(line: &str) -> Vec<Vec<String>> {
    let mut out = Vec::new();
    let bytes = line.as_bytes();
    for start in ["crate::", "super::", "self::"] {
        let mut from = 0;
        while let Some(at) = line[from..].find(start) {
            let begin = from + at;
            from = begin + start.len();
            if begin > 0 && (bytes[begin - 1].is_ascii_alphanumeric() || bytes[begin - 1] == b'_') {
                continue;
            }
            let mut segs = vec![start.trim_end_matches("::").to_string()];
            let rest = &line[begin + start.len()..];
            let mut chars = rest;
            loop {
                let word: String = chars
                    .chars()
                    .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                    .collect();
                if word.is_empty() {
                    if let Some(group) = chars.strip_prefix('{') {
                        let inner = group.split('}').next().unwrap_or("");
                        for item in inner.split(',') {
                            let name: String = item
                                .trim()
                                .chars()
                                .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                                .collect();
                            if !name.is_empty() && name != "self" {
                                let mut p = segs.clone();
                                p.push(name);
                                out.push(p);
                            }
                        }
                    }
                    break;
                }
                segs.push(word.clone());
                chars = &chars[word.len()..];
                match chars.strip_prefix("::") {
                    Some(r) => chars = r,
                    None => break,
                }
            }
            out.push(segs);
        }
    }
    out
}

/// Resolve a referenced path from module `here` to the deepest known module it names.
fn resolve(here: &[String], path: &[String], known: &BTreeSet<Vec<String>>) -> Option<Vec<String>> {
    let mut base: Vec<String> = Vec::new();
    let mut rest = path;
    match path.first().map(String::as_str) {
        Some("crate") => rest = &path[1..],
        Some("self") => {
            base = here.to_vec();
            rest = &path[1..];
        }
        Some("super") => {
            base = here.to_vec();
            while let Some("super") = rest.first().map(String::as_str) {
                base.pop()?;
                rest = &rest[1..];
            }
        }
        _ => return None,
    }
    let mut best = None;
    let mut cur = base.clone();
    if known.contains(&cur) {
        best = Some(cur.clone());
    }
    for seg in rest {
        cur.push(seg.clone());
        if known.contains(&cur) {
            best = Some(cur.clone());
        } else {
            break;
        }
    }
    best
}

fn is_prefix(a: &[String], b: &[String]) -> bool {
    a.len() <= b.len() && a == &b[..a.len()]
}

/// The import graph of one crate's files, without edges between a module and the modules
/// inside it (a parent re-exporting its children, a child using its parent's types).
fn import_graph(src: &Path) -> BTreeMap<Vec<String>, BTreeSet<Vec<String>>> {
    let files = rust_files(src);
    let modules: BTreeMap<Vec<String>, PathBuf> = files
        .iter()
        .map(|f| (module_of(f, src), f.clone()))
        .collect();
    let known: BTreeSet<Vec<String>> = modules.keys().cloned().collect();
    let mut graph: BTreeMap<Vec<String>, BTreeSet<Vec<String>>> = BTreeMap::new();
    for (here, file) in &modules {
        let text = std::fs::read_to_string(file).expect("a readable source file");
        let mut in_tests = false;
        for (_, line) in code_lines(&text) {
            // a file's own `mod tests` may use anything
            if line.trim_start().starts_with("#[cfg(test)]") {
                in_tests = true;
            }
            if in_tests {
                continue;
            }
            for p in referenced_paths(&line) {
                if let Some(target) = resolve(here, &p, &known) {
                    if !is_prefix(&target, here) && !is_prefix(here, &target) {
                        graph.entry(here.clone()).or_default().insert(target);
                    }
                }
            }
        }
    }
    graph
}

/// One circle in `graph`, if there is any (depth-first search).
fn find_cycle(graph: &BTreeMap<Vec<String>, BTreeSet<Vec<String>>>) -> Option<Vec<String>> {
    #[derive(Clone, Copy, PartialEq)]
    enum Mark {
        Open,
        Done,
    }
    fn visit(
        n: &Vec<String>,
        graph: &BTreeMap<Vec<String>, BTreeSet<Vec<String>>>,
        marks: &mut BTreeMap<Vec<String>, Mark>,
        stack: &mut Vec<Vec<String>>,
    ) -> Option<Vec<String>> {
        marks.insert(n.clone(), Mark::Open);
        stack.push(n.clone());
        for m in graph.get(n).into_iter().flatten() {
            // an edge into a module also reaches everything inside it, and the reverse
            match marks.get(m) {
                Some(Mark::Open) => {
                    let at = stack.iter().position(|s| s == m).unwrap_or(0);
                    let mut c: Vec<String> = stack[at..].iter().map(|s| s.join("::")).collect();
                    c.push(m.join("::"));
                    return Some(c);
                }
                Some(Mark::Done) => {}
                None => {
                    if let Some(c) = visit(m, graph, marks, stack) {
                        return Some(c);
                    }
                }
            }
        }
        stack.pop();
        marks.insert(n.clone(), Mark::Done);
        None
    }
    let mut marks = BTreeMap::new();
    for n in graph.keys() {
        if !marks.contains_key(n) {
            let mut stack = Vec::new();
            if let Some(c) = visit(n, graph, &mut marks, &mut stack) {
                return Some(c);
            }
        }
    }
    None
}

/// Collapse the graph to modules at `depth` segments (layers at 1, their parts at 2).
fn collapse(
    graph: &BTreeMap<Vec<String>, BTreeSet<Vec<String>>>,
    depth: usize,
) -> BTreeMap<Vec<String>, BTreeSet<Vec<String>>> {
    let cut = |m: &Vec<String>| m[..m.len().min(depth)].to_vec();
    let mut out: BTreeMap<Vec<String>, BTreeSet<Vec<String>>> = BTreeMap::new();
    for (from, tos) in graph {
        for to in tos {
            let (a, b) = (cut(from), cut(to));
            if !is_prefix(&a, &b) && !is_prefix(&b, &a) {
                out.entry(a).or_default().insert(b);
            }
        }
    }
    out
}

/// Import edges of circles that are being taken apart (from → to); the list only shrinks.
const PENDING_CIRCLE_EDGES: &[(&str, &str)] = &[];

#[test]
fn no_import_circle_between_modules() {
    let mut circles = Vec::new();
    for src in [root().join("src"), root().join("core/src")] {
        let graph = import_graph(&src);
        assert!(!graph.is_empty(), "read imports under {}", src.display());
        for depth in [1, 2, usize::MAX] {
            let mut g = collapse(&graph, depth);
            // every circle, one at a time: each found one loses its closing edge
            while let Some(c) = find_cycle(&g) {
                let (from, to) = (&c[c.len() - 2], &c[c.len() - 1]);
                let split = |s: &String| s.split("::").map(str::to_string).collect::<Vec<_>>();
                if let Some(e) = g.get_mut(&split(from)) {
                    e.remove(&split(to));
                }
                let pending = PENDING_CIRCLE_EDGES
                    .iter()
                    .any(|(a, b)| c.windows(2).any(|w| w[0] == *a && w[1] == *b));
                if !pending {
                    circles.push(format!("{}: {}", rel(&src), c.join(" → ")));
                }
            }
        }
    }
    circles.sort();
    circles.dedup();
    assert!(
        circles.is_empty(),
        "import circles:\n{}",
        circles.join("\n")
    );
}

#[test]
fn the_circle_finder_finds_a_circle() {
    // The rule above can fail: a hand-made circle of three files is found.
    let m = |s: &str| s.split("::").map(str::to_string).collect::<Vec<String>>();
    let mut g: BTreeMap<Vec<String>, BTreeSet<Vec<String>>> = BTreeMap::new();
    g.entry(m("store::audit"))
        .or_default()
        .insert(m("store::incidents"));
    g.entry(m("store::incidents"))
        .or_default()
        .insert(m("store::refdata"));
    g.entry(m("store::refdata"))
        .or_default()
        .insert(m("store::audit"));
    assert!(find_cycle(&g).is_some());
    g.remove(&m("store::refdata"));
    assert!(find_cycle(&g).is_none());
    let known: BTreeSet<Vec<String>> = [m("store"), m("store::audit"), m("app")].into();
    assert_eq!(
        resolve(&m("store::incidents"), &m("super::audit::Chain"), &known),
        Some(m("store::audit"))
    );
    assert_eq!(
        referenced_paths("use crate::{app, store::Store};"),
        vec![m("crate::app"), m("crate::store"), m("crate")]
    );
}

/// Functions longer than `limit` lines in `text`: (first line, length, name).
fn long_functions(text: &str, limit: usize) -> Vec<(usize, usize, String)> {
    let lines: Vec<&str> = text.lines().collect();
    let mut out = Vec::new();
    for (i, l) in lines.iter().enumerate() {
        let t = l.trim_start();
        let indent = l.len() - t.len();
        let is_fn = t.starts_with("fn ")
            || t.starts_with("pub fn ")
            || t.starts_with("pub(crate) fn ")
            || t.starts_with("pub(super) fn ")
            || t.starts_with("const fn ")
            || t.starts_with("pub const fn ")
            || t.starts_with("unsafe fn ")
            || t.starts_with("async fn ");
        if !is_fn {
            continue;
        }
        let name: String = t
            .split("fn ")
            .nth(1)
            .unwrap_or("")
            .chars()
            .take_while(|c| c.is_alphanumeric() || *c == '_')
            .collect();
        // the body ends at the first line that is `}` at the same indentation
        let close = format!("{}}}", " ".repeat(indent));
        if let Some(end) = lines[i + 1..].iter().position(|x| x.trim_end() == close) {
            let len = end + 2;
            if len > limit {
                out.push((i + 1, len, name));
            }
        }
    }
    out
}

#[test]
fn files_and_functions_stay_readable() {
    let mut files = rust_files(&root().join("src"));
    files.extend(rust_files(&root().join("core/src")));
    let mut problems = Vec::new();
    for f in &files {
        let text = std::fs::read_to_string(f).expect("a readable source file");
        let n = text.lines().count();
        if n > 1000 {
            problems.push(format!("{}: {n} lines (at most 1,000)", rel(f)));
        }
        for (line, len, name) in long_functions(&text, 150) {
            // a function that is one table of data (a `static`/`const` list or a `match` of
            // literal rows) is allowed to be long; it says so on its first line
            let first = text.lines().nth(line.saturating_sub(2)).unwrap_or("");
            if first.contains("// a table") {
                continue;
            }
            problems.push(format!(
                "{}:{line}: fn {name} is {len} lines (at most 150)",
                rel(f)
            ));
        }
    }
    // Files being split; the list only shrinks.
    let pending: &[&str] = &[];
    let problems: Vec<String> = problems
        .into_iter()
        .filter(|p| !pending.iter().any(|x| p.starts_with(x)))
        .collect();
    assert!(
        problems.is_empty(),
        "too long to read:\n{}",
        problems.join("\n")
    );
}

#[test]
fn the_length_rule_measures_functions() {
    let body = format!(
        "fn short() {{\n}}\n\nfn long() {{\n{}}}\n",
        "    x();\n".repeat(200)
    );
    let found = long_functions(&body, 150);
    assert_eq!(found, vec![(4, 202, "long".to_string())]);
}
