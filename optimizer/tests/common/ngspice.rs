//! Running ngspice (Debian package `ngspice`, batch mode) on a deck that
//! spanfit exported, shared by the cross-check tests.

// Tests run ngspice: they write decks to files and start a process.
#![allow(clippy::disallowed_methods, clippy::disallowed_types)]

use std::path::PathBuf;
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Runs so far, to give each its own folder.
static RUN: AtomicUsize = AtomicUsize::new(0);

/// The ngspice binary on PATH, or a failure that says what to install.
pub fn ngspice() -> PathBuf {
    let path = std::env::var_os("PATH").unwrap_or_default();
    for dir in std::env::split_paths(&path) {
        let candidate = dir.join("ngspice");
        if candidate.is_file() {
            return candidate;
        }
    }
    panic!(
        "ngspice is not on PATH. These checks run exported netlists in ngspice \
         (Debian package `ngspice`: apt-get install -y ngspice); CI installs it. \
         They are not skipped on purpose."
    );
}

/// Run a deck in ngspice batch mode in a fresh temporary folder and return
/// what it printed; fails when ngspice fails or reports an error (`tag`
/// names the run in messages and in the folder's name).
pub fn run_deck(deck: &str, tag: &str) -> String {
    let bin = ngspice();
    let n = RUN.fetch_add(1, Ordering::SeqCst);
    let safe: String = tag
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    let dir =
        std::env::temp_dir().join(format!("spanfit-ngspice-{}-{n}-{safe}", std::process::id()));
    std::fs::create_dir_all(&dir)
        .unwrap_or_else(|e| panic!("cannot create {}: {e}", dir.display()));
    let file = dir.join("deck.cir");
    std::fs::write(&file, deck).unwrap_or_else(|e| panic!("cannot write {}: {e}", file.display()));
    let out = Command::new(&bin)
        .arg("-b")
        .arg(&file)
        .current_dir(&dir)
        .output()
        .unwrap_or_else(|e| panic!("cannot run {}: {e}", bin.display()));
    let stdout = String::from_utf8_lossy(&out.stdout).to_string();
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    // SPANFIT_KEEP_DECKS=1 keeps the folders for inspection.
    if std::env::var_os("SPANFIT_KEEP_DECKS").is_none() {
        let _ = std::fs::remove_dir_all(&dir);
    }
    assert!(
        out.status.success(),
        "ngspice failed on {tag} ({}):\n{stdout}\n{stderr}\n--- deck ---\n{deck}",
        out.status
    );
    for bad in ["singular matrix", "Error", "error:"] {
        assert!(
            !stdout.contains(bad) && !stderr.contains(bad),
            "ngspice reported `{bad}` on {tag}:\n{stdout}\n{stderr}\n--- deck ---\n{deck}"
        );
    }
    stdout
}

/// The value a deck's `.control` block printed as `name = <v>`; fails
/// unless exactly one such line exists and it is a number.
pub fn printed(stdout: &str, tag: &str, name: &str) -> f64 {
    let prefix = format!("{name} = ");
    let values: Vec<f64> = stdout
        .lines()
        .filter_map(|l| l.trim().strip_prefix(&prefix))
        .map(|v| {
            v.trim()
                .parse::<f64>()
                .unwrap_or_else(|e| panic!("{tag}: `{name} = {v}` is not a number: {e}"))
        })
        .collect();
    assert_eq!(
        values.len(),
        1,
        "{tag}: expected one `{name}` line in:\n{stdout}"
    );
    values[0]
}

/// Run a deck in ngspice (see [`run_deck`]); returns the output at the low
/// and the high end of the span as printed by the deck's `.control` block.
pub fn run_ngspice(deck: &str, tag: &str) -> [f64; 2] {
    let stdout = run_deck(deck, tag);
    [
        printed(&stdout, tag, spanfit::spice::OUT_LOW_NAME),
        printed(&stdout, tag, spanfit::spice::OUT_HIGH_NAME),
    ]
}

/// The deck with the DC value of the one element `name` set to `value`;
/// fails unless exactly one such element line exists (the naming contract).
pub fn set_dc(deck: &str, name: &str, value: f64) -> String {
    let prefix = format!("{name} ");
    let mut found = 0;
    let lines: Vec<String> = deck
        .lines()
        .map(|l| {
            if l.starts_with(&prefix) && l.contains(" DC ") {
                found += 1;
                let head = &l[..l.rfind(" DC ").unwrap_or(l.len())];
                format!("{head} DC {value:e}")
            } else {
                l.to_string()
            }
        })
        .collect();
    assert_eq!(
        found, 1,
        "expected one element line `{name} ... DC <v>` in the deck:\n{deck}"
    );
    lines.join("\n") + "\n"
}
