//! The same need and stock give the same report, byte for byte, on every
//! run: each example need (`examples/*.toml`, `examples/edge/*.toml`, the
//! embedded demo) is solved twice through `spanfit::api::solve_bundle`
//! with a clock that never reaches the time limit, and the two JSON texts
//! are compared with `elapsed_ms` removed. A difference means an unordered
//! collection (a `HashMap` iteration, say) decides something.
// A test reads the examples from disk and the clock, and stops loudly on a
// broken tree; the core itself does none of these.
#![allow(
    clippy::disallowed_methods,
    clippy::disallowed_types,
    clippy::unwrap_used
)]

use serde_json::Value;
use spanfit::api::{solve_bundle, Progress, SolveControl};
use std::path::{Path, PathBuf};

/// Every need file: `examples/*.toml`, `examples/edge/*.toml`, the demo.
fn need_files() -> Vec<(String, Vec<u8>)> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples");
    let mut out = Vec::new();
    for dir in [root.clone(), root.join("edge")] {
        let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.extension().is_some_and(|x| x == "toml"))
            .collect();
        paths.sort();
        for p in paths {
            out.push((p.display().to_string(), std::fs::read(&p).unwrap()));
        }
    }
    out.push((
        "embedded demo".into(),
        spanfit::demo::NEED_TOML.as_bytes().to_vec(),
    ));
    out
}

/// `v` with every `elapsed_ms` key removed, at any depth.
fn without_elapsed(v: &mut Value) {
    match v {
        Value::Object(map) => {
            map.remove("elapsed_ms");
            map.values_mut().for_each(without_elapsed);
        }
        Value::Array(items) => items.iter_mut().for_each(without_elapsed),
        _ => {}
    }
}

fn solved_text(need: &[u8], name: &str) -> String {
    let mut progress = |_: Progress| true;
    // A clock standing still: the time limit is never reached.
    let clock = || 0.0;
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &clock,
    };
    let bundle = solve_bundle(need, name, &[], false, &mut control)
        .unwrap_or_else(|e| panic!("{name}: {e}"));
    let mut v = serde_json::to_value(bundle).expect("a bundle serialises");
    // The clock stands still, so nothing is stopped: an unfinished status
    // here can only be a search that found no design without a proof.
    if v["report"]["status"] == "unfinished" {
        assert_eq!(v["report"]["infeasible"]["proven"], false, "{name}");
    }
    without_elapsed(&mut v);
    serde_json::to_string_pretty(&v).unwrap()
}

#[test]
fn every_example_need_solves_to_the_same_bytes_twice() {
    for (name, need) in need_files() {
        let first = solved_text(&need, &name);
        let second = solved_text(&need, &name);
        if first != second {
            let line = first
                .lines()
                .zip(second.lines())
                .position(|(a, b)| a != b)
                .unwrap_or(0);
            panic!(
                "{name}: the two runs differ from line {}:\n{}\n---\n{}",
                line + 1,
                first
                    .lines()
                    .skip(line)
                    .take(5)
                    .collect::<Vec<_>>()
                    .join("\n"),
                second
                    .lines()
                    .skip(line)
                    .take(5)
                    .collect::<Vec<_>>()
                    .join("\n"),
            );
        }
    }
}
