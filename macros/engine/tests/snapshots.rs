//! Snapshots of the twins of every fixture kernel (`fixtures/src/*.rs`), as `twinstep expand` prints them.
//!
//! A change to the engine that changes any twin shows up here as a reviewable diff. New snapshots are accepted
//! with `INSTA_UPDATE=always cargo test -p twinstep-engine --test snapshots`; CI runs with `CI=true`, which makes
//! a missing or different snapshot fail.

use std::path::{Path, PathBuf};

/// The fixture sources that carry annotated kernels, sorted by name.
fn fixture_sources() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../fixtures/src");
    let entries = std::fs::read_dir(&dir).unwrap_or_else(|e| panic!("cannot read {}: {e}", dir.display()));
    let mut sources: Vec<PathBuf> = entries
        .filter_map(|entry| entry.ok().map(|e| e.path()))
        .filter(|path| path.extension().is_some_and(|ext| ext == "rs") && !path.ends_with("lib.rs"))
        .collect();
    sources.sort();
    sources
}

fn stem(path: &Path) -> String {
    path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_default()
}

/// The twin of a whole kernel file, as `twinstep-build` makes it, formatted for review.
fn whole_file(source: &str) -> Result<String, Vec<twinstep_engine::SourceError>> {
    let file = syn::parse_file(source).map_err(twinstep_engine::source_errors)?;
    let items = twinstep_engine::twins_of_file(&twinstep_engine::Options::default(), &file)
        .map_err(twinstep_engine::source_errors)?;
    Ok(twinstep_engine::format_items(items))
}

#[test]
fn every_fixture_expands_as_its_snapshot() {
    let sources = fixture_sources();
    assert!(sources.len() >= 15, "expected at least 15 fixture kernels, found {}", sources.len());
    let mut settings = insta::Settings::clone_current();
    settings.set_prepend_module_to_snapshot(false);
    settings.set_omit_expression(true);
    for path in sources {
        let name = stem(&path);
        let source = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()));
        // A fixture without an attribute is a kernel file the build helper twins whole (`file_kernel.rs`).
        let twins = if source.contains("#[twinstep::audit") {
            twinstep_engine::expand_source(&source, None)
        } else {
            whole_file(&source)
        };
        let twins = twins.unwrap_or_else(|errors| panic!("{name}: the engine rejected a fixture: {errors:?}"));
        settings.set_input_file(&path);
        settings.bind(|| insta::assert_snapshot!(name, twins));
    }
}

#[test]
fn no_snapshot_outlives_its_fixture() {
    let fixtures: Vec<String> = fixture_sources().iter().map(|p| stem(p)).collect();
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/snapshots");
    let Ok(entries) = std::fs::read_dir(&dir) else { return };
    for entry in entries.filter_map(Result::ok) {
        let path = entry.path();
        if path.extension().is_some_and(|ext| ext == "snap") {
            let name = stem(&path);
            assert!(fixtures.contains(&name), "snapshot {} has no fixture `fixtures/src/{name}.rs`", path.display());
        }
    }
}
