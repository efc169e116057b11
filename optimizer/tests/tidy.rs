//! Tidy checks that hold the core crate's invariants (ARCHITECTURE.md,
//! STYLE.md section 2): every module opens with a `//!` header; the core
//! does no I/O (no `std::fs`, `std::time`, `std::net`, `std::process`,
//! `std::env`, no printing macros, no `dbg!`); and no `.unwrap()` outside
//! `#[cfg(test)]` items. Comments and string literals are blanked before
//! scanning, so prose that mentions a forbidden name does not trip a check.

use std::path::{Path, PathBuf};

/// `.unwrap()` calls allowed outside tests: `(file under src, count, reason)`.
/// Keep this empty unless a call truly cannot fail and the reason says why.
const UNWRAP_ALLOWLIST: &[(&str, usize, &str)] = &[];

/// Paths the core must not use: files, the clock, sockets, processes and
/// the environment.
const FORBIDDEN_MODULES: &[&str] = &["fs", "time", "net", "process", "env"];

/// Macros that print or debug-print.
const FORBIDDEN_MACROS: &[&str] = &["println", "print", "eprintln", "eprint", "dbg"];

fn source_files() -> Vec<PathBuf> {
    fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
        let entries =
            std::fs::read_dir(dir).unwrap_or_else(|e| panic!("reading {}: {e}", dir.display()));
        for entry in entries {
            let path = entry.expect("directory entry").path();
            if path.is_dir() {
                walk(&path, out);
            } else if path.extension().is_some_and(|x| x == "rs") {
                out.push(path);
            }
        }
    }
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut out = Vec::new();
    walk(&root, &mut out);
    out.sort();
    assert!(
        out.len() > 5,
        "found only {} source files under {}",
        out.len(),
        root.display()
    );
    out
}

fn relative(path: &Path) -> String {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    path.strip_prefix(&root)
        .unwrap_or(path)
        .display()
        .to_string()
        .replace('\\', "/")
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("reading {}: {e}", path.display()))
}

/// The text with comments and the contents of string and character
/// literals replaced by spaces (newlines kept, so offsets and line numbers
/// stay those of the original).
fn strip_comments_and_strings(text: &str) -> String {
    let b: Vec<char> = text.chars().collect();
    let mut out: Vec<char> = b.clone();
    let blank = |out: &mut Vec<char>, from: usize, to: usize| {
        for c in out.iter_mut().take(to.min(b.len())).skip(from) {
            if *c != '\n' {
                *c = ' ';
            }
        }
    };
    let ident = |c: char| c.is_alphanumeric() || c == '_';
    let mut i = 0;
    while i < b.len() {
        let c = b[i];
        let next = b.get(i + 1).copied();
        if c == '/' && next == Some('/') {
            let end = b[i..]
                .iter()
                .position(|&c| c == '\n')
                .map_or(b.len(), |p| i + p);
            blank(&mut out, i, end);
            i = end;
        } else if c == '/' && next == Some('*') {
            let mut depth = 0;
            let mut j = i;
            while j < b.len() {
                if b[j] == '/' && b.get(j + 1) == Some(&'*') {
                    depth += 1;
                    j += 2;
                } else if b[j] == '*' && b.get(j + 1) == Some(&'/') {
                    depth -= 1;
                    j += 2;
                    if depth == 0 {
                        break;
                    }
                } else {
                    j += 1;
                }
            }
            blank(&mut out, i, j);
            i = j;
        } else if (c == 'r' || (c == 'b' && next == Some('r'))) && (i == 0 || !ident(b[i - 1])) && {
            let k = if c == 'b' { i + 2 } else { i + 1 };
            let hashes = b[k..].iter().take_while(|&&c| c == '#').count();
            b.get(k + hashes) == Some(&'"')
        } {
            // Raw string r"..", r#".."#, br"..".
            let k = if c == 'b' { i + 2 } else { i + 1 };
            let hashes = b[k..].iter().take_while(|&&c| c == '#').count();
            let start = k + hashes + 1;
            let mut j = start;
            loop {
                if j >= b.len() {
                    break;
                }
                if b[j] == '"'
                    && b[j + 1..]
                        .iter()
                        .take(hashes)
                        .filter(|&&c| c == '#')
                        .count()
                        == hashes
                {
                    break;
                }
                j += 1;
            }
            blank(&mut out, start, j);
            i = j + 1 + hashes;
        } else if c == '"' {
            let mut j = i + 1;
            while j < b.len() && b[j] != '"' {
                j += if b[j] == '\\' { 2 } else { 1 };
            }
            blank(&mut out, i + 1, j);
            i = j + 1;
        } else if c == '\'' {
            // A char literal ('x', '\n', '\u{..}') or a lifetime ('a).
            if next == Some('\\') {
                // Skip the backslash and the escaped character ('\'').
                let mut j = i + 3;
                while j < b.len() && b[j] != '\'' {
                    j += 1;
                }
                blank(&mut out, i + 1, j);
                i = j + 1;
            } else if b.get(i + 2) == Some(&'\'') {
                blank(&mut out, i + 1, i + 2);
                i += 3;
            } else {
                i += 1;
            }
        } else {
            i += 1;
        }
    }
    out.into_iter().collect()
}

/// The stripped text with every item marked `#[cfg(test)]` blanked too.
fn without_test_items(stripped: &str) -> String {
    let mut out: Vec<char> = stripped.chars().collect();
    let marker: Vec<char> = "#[cfg(test)]".chars().collect();
    let mut i = 0;
    while i + marker.len() <= out.len() {
        if out[i..i + marker.len()] != marker[..] {
            i += 1;
            continue;
        }
        // The item ends at its first `;` outside braces, or at the brace
        // that closes its first block.
        let mut j = i + marker.len();
        let mut depth = 0usize;
        while j < out.len() {
            match out[j] {
                '{' => depth += 1,
                '}' => {
                    depth = depth.saturating_sub(1);
                    if depth == 0 {
                        break;
                    }
                }
                ';' if depth == 0 => break,
                _ => {}
            }
            j += 1;
        }
        let end = (j + 1).min(out.len());
        for c in &mut out[i..end] {
            if *c != '\n' {
                *c = ' ';
            }
        }
        i = end;
    }
    out.into_iter().collect()
}

fn line_of(text: &str, char_offset: usize) -> usize {
    text.chars()
        .take(char_offset)
        .filter(|&c| c == '\n')
        .count()
        + 1
}

/// Offsets (in chars) of `needle` in `hay` once all whitespace is ignored,
/// mapped back to the original offsets.
fn find_ignoring_whitespace(hay: &str, needle: &str) -> Vec<usize> {
    let (squeezed, origin): (Vec<char>, Vec<usize>) = hay
        .chars()
        .enumerate()
        .filter(|(_, c)| !c.is_whitespace())
        .map(|(i, c)| (c, i))
        .unzip();
    let needle: Vec<char> = needle.chars().collect();
    let mut hits = Vec::new();
    if needle.len() > squeezed.len() {
        return hits;
    }
    for k in 0..=squeezed.len() - needle.len() {
        if squeezed[k..k + needle.len()] == needle[..] {
            hits.push(origin[k]);
        }
    }
    hits
}

/// Uses of a forbidden `std` module: `std::fs`, `::std::fs`, and names
/// inside a grouped import `use std::{fs, ..}`.
fn forbidden_paths(code: &str) -> Vec<(usize, String)> {
    let mut found = Vec::new();
    let chars: Vec<char> = code.chars().collect();
    let ident = |c: char| c.is_alphanumeric() || c == '_';
    for module in FORBIDDEN_MODULES {
        for at in find_ignoring_whitespace(code, &format!("std::{module}")) {
            // Whole words only: not `mystd::fs`, not `std::fsx`.
            let before_ok = at == 0 || !ident(chars[at - 1]);
            let mut end = at;
            let mut seen = 0;
            let want = format!("std::{module}")
                .chars()
                .filter(|c| !c.is_whitespace())
                .count();
            while end < chars.len() && seen < want {
                if !chars[end].is_whitespace() {
                    seen += 1;
                }
                end += 1;
            }
            let after_ok = end >= chars.len() || !ident(chars[end]);
            if before_ok && after_ok {
                found.push((at, format!("std::{module}")));
            }
        }
    }
    for at in find_ignoring_whitespace(code, "std::{") {
        let open = code.chars().skip(at).position(|c| c == '{').map(|p| at + p);
        let Some(open) = open else { continue };
        let group: String = chars[open + 1..]
            .iter()
            .take_while(|&&c| c != '}')
            .collect();
        for name in group
            .split(',')
            .map(|s| s.split("::").next().unwrap_or("").trim())
        {
            if FORBIDDEN_MODULES.contains(&name) {
                found.push((at, format!("std::{{{name}}}")));
            }
        }
    }
    found
}

/// Invocations of forbidden macros: an identifier followed by `!` (not `!=`).
fn forbidden_macros(code: &str) -> Vec<(usize, String)> {
    let chars: Vec<char> = code.chars().collect();
    let ident = |c: char| c.is_alphanumeric() || c == '_';
    let mut found = Vec::new();
    let mut i = 0;
    while i < chars.len() {
        if ident(chars[i]) && (i == 0 || !ident(chars[i - 1])) {
            let start = i;
            while i < chars.len() && ident(chars[i]) {
                i += 1;
            }
            let name: String = chars[start..i].iter().collect();
            let mut j = i;
            while j < chars.len() && chars[j].is_whitespace() {
                j += 1;
            }
            let bang = chars.get(j) == Some(&'!') && chars.get(j + 1) != Some(&'=');
            if bang && FORBIDDEN_MACROS.contains(&name.as_str()) {
                found.push((start, format!("{name}!")));
            }
        } else {
            i += 1;
        }
    }
    found
}

#[test]
fn every_module_starts_with_a_module_doc_header() {
    let mut missing = Vec::new();
    for path in source_files() {
        let text = read(&path);
        let first = text
            .trim_start_matches('\u{feff}')
            .lines()
            .find(|l| !l.trim().is_empty());
        if !first.is_some_and(|l| l.trim_start().starts_with("//!")) {
            missing.push(relative(&path));
        }
    }
    assert!(
        missing.is_empty(),
        "modules without a `//!` header: {missing:?}"
    );
}

#[test]
fn core_does_no_io_no_printing_no_clock() {
    let mut violations = Vec::new();
    for path in source_files() {
        let text = read(&path);
        let code = strip_comments_and_strings(&text);
        for (at, what) in forbidden_paths(&code)
            .into_iter()
            .chain(forbidden_macros(&code))
        {
            violations.push(format!(
                "{}:{}: {what}",
                relative(&path),
                line_of(&text, at)
            ));
        }
    }
    assert!(
        violations.is_empty(),
        "the core crate must do no I/O:\n{}",
        violations.join("\n")
    );
}

#[test]
fn no_unwrap_outside_tests() {
    let mut violations = Vec::new();
    for path in source_files() {
        let text = read(&path);
        let code = without_test_items(&strip_comments_and_strings(&text));
        let hits = find_ignoring_whitespace(&code, ".unwrap()");
        let name = relative(&path);
        let allowed = UNWRAP_ALLOWLIST
            .iter()
            .find(|(file, _, _)| *file == name)
            .map_or(0, |(_, n, _)| *n);
        if hits.len() > allowed {
            for at in hits {
                violations.push(format!("{name}:{}: .unwrap()", line_of(&text, at)));
            }
        }
    }
    assert!(
        violations.is_empty(),
        "`.unwrap()` outside #[cfg(test)] (return a Result, or add to the allowlist with a reason):\n{}",
        violations.join("\n")
    );
}

// The scanners themselves, on small samples, so a broken scanner cannot
// pass the checks above by finding nothing.

#[test]
fn scanner_blanks_comments_and_strings_but_keeps_code() {
    let sample = "// println!(\"x\")\nlet s = \"std::fs\"; /* dbg!(1) /* nested */ */ let c = '\"'; let q = '\\'';\n\
                  let r = r#\"eprintln!\"#; fn f<'a>(x: &'a str) { print!(\"{}\", x) }\n";
    let code = strip_comments_and_strings(sample);
    assert_eq!(code.len(), sample.len());
    assert_eq!(code.lines().count(), sample.lines().count());
    let macros: Vec<String> = forbidden_macros(&code)
        .into_iter()
        .map(|(_, m)| m)
        .collect();
    assert_eq!(macros, vec!["print!".to_string()]);
    assert!(forbidden_paths(&code).is_empty());
    assert!(code.contains("fn f<'a>(x: &'a str)"));
}

#[test]
fn scanner_finds_forbidden_paths_and_skips_test_items() {
    let sample =
        "use std::{collections::BTreeMap, fs};\nuse std :: time::Instant;\nuse std::fmt;\n\
                  fn a() { x.unwrap(); }\n#[cfg(test)]\nmod tests { fn b() { y.unwrap(); { } } }\n\
                  #[cfg(test)]\nfn c() -> usize { z.unwrap() }\nfn d() { w . unwrap ( ); }\n";
    let code = strip_comments_and_strings(sample);
    let mut paths: Vec<String> = forbidden_paths(&code).into_iter().map(|(_, p)| p).collect();
    paths.sort();
    assert_eq!(
        paths,
        vec!["std::time".to_string(), "std::{fs}".to_string()]
    );
    let kept = without_test_items(&code);
    let lines: Vec<usize> = find_ignoring_whitespace(&kept, ".unwrap()")
        .into_iter()
        .map(|at| line_of(sample, at))
        .collect();
    assert_eq!(lines, vec![4, 9]);
}
