//! Tidy checks for what lints cannot hold: every module of the core crate
//! (`optimizer/src`) and of the wasm crate (`web/src`) opens with a `//!`
//! header saying what it is for.
//!
//! The rest of the core's invariants are lints, checked by
//! `cargo clippy --workspace --all-targets -- -D warnings`: no printing, no
//! `dbg!` and no `unwrap` outside tests (`[workspace.lints]` in the root
//! `Cargo.toml`), and no files, clock, environment, processes, sockets or
//! standard streams in the core and the wasm crate
//! (`disallowed-methods` and `disallowed-types` in `optimizer/clippy.toml`
//! and `web/clippy.toml`).

// This test reads the source files.
#![allow(clippy::disallowed_methods)]

use std::path::{Path, PathBuf};

/// The folders whose modules must carry a header, relative to the
/// workspace root.
const SOURCE_FOLDERS: [&str; 2] = ["optimizer/src", "web/src"];

fn workspace_root() -> PathBuf {
    let manifest = Path::new(env!("CARGO_MANIFEST_DIR"));
    manifest.parent().unwrap_or(manifest).to_path_buf()
}

/// Every `.rs` file under `dir`, sorted.
fn rust_files(dir: &Path) -> Vec<PathBuf> {
    fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
        let entries =
            std::fs::read_dir(dir).unwrap_or_else(|e| panic!("reading {}: {e}", dir.display()));
        for entry in entries {
            let path = entry.expect("a directory entry").path();
            if path.is_dir() {
                walk(&path, out);
            } else if path.extension().is_some_and(|x| x == "rs") {
                out.push(path);
            }
        }
    }
    let mut out = Vec::new();
    walk(dir, &mut out);
    out.sort();
    out
}

/// Whether a module's text opens with a `//!` header: blank lines and
/// `#![...]` inner attributes may come first, nothing else.
fn opens_with_module_doc(text: &str) -> bool {
    text.lines()
        .map(str::trim_start)
        .find(|l| !l.trim().is_empty() && !l.starts_with("#!["))
        .is_some_and(|l| l.starts_with("//!"))
}

#[test]
fn every_module_starts_with_a_module_doc_header() {
    let root = workspace_root();
    let mut missing = Vec::new();
    let mut checked = 0;
    for folder in SOURCE_FOLDERS {
        let files = rust_files(&root.join(folder));
        assert!(!files.is_empty(), "no Rust files under {folder}");
        for path in files {
            let text = std::fs::read_to_string(&path)
                .unwrap_or_else(|e| panic!("reading {}: {e}", path.display()));
            checked += 1;
            if !opens_with_module_doc(&text) {
                let shown = path.strip_prefix(&root).unwrap_or(&path);
                missing.push(shown.display().to_string());
            }
        }
    }
    assert!(checked > 10, "only {checked} modules found");
    assert!(
        missing.is_empty(),
        "modules without a `//!` header saying what they are for: {missing:?}"
    );
}

#[test]
fn the_header_check_tells_a_header_from_other_comments() {
    assert!(opens_with_module_doc("//! The model.\nuse x;\n"));
    assert!(opens_with_module_doc(
        "\n#![deny(missing_docs)]\n//! The model.\n"
    ));
    assert!(!opens_with_module_doc(
        "// A plain comment.\n//! Too late.\n"
    ));
    assert!(!opens_with_module_doc("/// An item doc.\nfn f() {}\n"));
    assert!(!opens_with_module_doc("use x;\n//! Too late.\n"));
    assert!(!opens_with_module_doc(""));
}
