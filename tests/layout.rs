//! Checks of the test member's own manifest (no numerics): the test files in this folder are
//! listed one by one in `tests/Cargo.toml` (automatic discovery would look in `tests/tests/`),
//! so a new file that nobody lists would silently never run; and `--all-features` /
//! `--no-default-features` reach the library only through features of the same name here.

use std::collections::BTreeSet;
use std::path::Path;

/// The lines of the `[name]` table of a manifest, up to the next table header.
fn table<'a>(manifest: &'a str, name: &str) -> Vec<&'a str> {
    let header = format!("[{name}]");
    manifest
        .lines()
        .map(str::trim)
        .skip_while(|line| *line != header)
        .skip(1)
        .take_while(|line| !line.starts_with('['))
        .filter(|line| !line.is_empty() && !line.starts_with('#'))
        .collect()
}

/// The keys of `key = value` lines.
fn keys(lines: &[&str]) -> BTreeSet<String> {
    lines
        .iter()
        .filter_map(|line| line.split_once('='))
        .map(|(key, _)| key.trim().to_string())
        .collect()
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

#[test]
fn every_test_file_is_a_listed_target() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"));
    let manifest = read(&dir.join("Cargo.toml"));
    let listed: BTreeSet<String> = manifest
        .lines()
        .filter_map(|line| line.trim().strip_prefix("path = \""))
        .filter_map(|rest| rest.strip_suffix('"'))
        .map(str::to_string)
        .collect();
    let present: BTreeSet<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|entry| entry.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|name| name.ends_with(".rs"))
        .collect();
    let missing: Vec<_> = present.difference(&listed).collect();
    assert!(
        missing.is_empty(),
        "test files not listed as [[test]] targets in tests/Cargo.toml: {missing:?}"
    );
    let stale: Vec<_> = listed.difference(&present).collect();
    assert!(stale.is_empty(), "listed but absent: {stale:?}");
}

#[test]
fn every_library_feature_has_a_test_feature() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"));
    let library = keys(&table(&read(&dir.join("../Cargo.toml")), "features"));
    let ours = keys(&table(&read(&dir.join("Cargo.toml")), "features"));
    let missing: Vec<_> = library.difference(&ours).collect();
    assert!(
        missing.is_empty(),
        "features of quintet without a feature of the same name in tests/Cargo.toml \
         (add `name = [\"quintet/name\"]`): {missing:?}"
    );
}
