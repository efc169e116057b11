//! The `spanfit` command-line program.
//!
//! A thin shell around [`spanfit::api`]: it parses the command line, reads
//! the need file (NEED) and the stock folder it names, hands bytes to the core,
//! prints the report, writes the export files, and turns the outcome into
//! the exit status of `docs/report.md`: 0 with a design, 1 when no
//! design meets the need, 2 on bad input or usage.
//!
//! Invariant: no engineering happens here; every number comes from the
//! core. This is the only crate that touches files, the clock and the
//! terminal (besides the wasm crate, which touches the page).

use anyhow::{bail, Context, Result};
use spanfit::api::{Progress, SolveControl};
use spanfit::report::{Artifacts, Bundle, Status};
use spanfit::stock::StockFile;
use std::ffi::OsString;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

/// Largest input file read at all; the core applies its own, smaller
/// limits with its own messages, this only keeps a huge file out of memory.
const MAX_READ_BYTES: u64 = 64 << 20;

const USAGE: &str = "\
spanfit: op-amp interfaces between small-span transducers and ADCs

usage:
  spanfit solve NEED [--json] [--explain] [--exhaustive] [--progress] [--spice FILE] [--bom FILE] [--svg FILE]
  spanfit analyze NEED --design DESIGN.json [--json] [--explain] [--spice FILE] [--bom FILE] [--svg FILE]
  spanfit demo [--json] [--explain] [--progress] [--spice FILE] [--bom FILE] [--svg FILE]
  spanfit help

verbs:
  solve     find the cheapest design that meets the need in NEED
  analyze   report the error budget of a design you already have
  demo      solve the embedded demo need against the embedded demo stock

NEED is a need file, TOML (or JSON starting with `{`). Its `[stock] path`
names a folder of stock CSV files, relative to the folder NEED is in; every
*.csv file in it is read. Without `path` the embedded demo stock is used.

options:
  --json         print the report as one JSON object instead of text
  --explain      after the text report, how each budget line is worked out
                 (its formula, inputs and parts; the JSON always has it)
  --exhaustive   enumerate the whole space without pruning (solve; slow)
  --progress     show search progress on stderr
  --design FILE  the design to analyse (a design file, or a reported design)
  --spice FILE   write the SPICE netlist of the design
  --bom FILE     write the bill of materials (CSV)
  --svg FILE     write the schematic (SVG)
  -h, --help     show this help

exit status: 0 a design meets the need; 1 no design meets it (the binding
reason and what to relax are printed); 2 bad input or bad usage.

spanfit designs low-voltage signal conditioning only; verify on the bench;
follow applicable standards and codes.
";

/// What the user asked for.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Verb {
    Solve,
    Analyze,
    Demo,
}

impl Verb {
    fn name(self) -> &'static str {
        match self {
            Verb::Solve => "solve",
            Verb::Analyze => "analyze",
            Verb::Demo => "demo",
        }
    }
}

/// A parsed command line.
#[derive(Debug, Default)]
struct Options {
    need_path: Option<PathBuf>,
    design: Option<PathBuf>,
    json: bool,
    explain: bool,
    exhaustive: bool,
    progress: bool,
    spice: Option<PathBuf>,
    bom: Option<PathBuf>,
    svg: Option<PathBuf>,
}

/// What the command line amounts to.
#[derive(Debug)]
enum Command {
    Help,
    Version,
    Run(Verb, Options),
}

/// A command line that does not parse: the message, shown with the usage.
#[derive(Debug, PartialEq)]
struct UsageError(String);

fn text_arg(arg: &OsString) -> std::result::Result<&str, UsageError> {
    arg.to_str()
        .ok_or_else(|| UsageError(format!("argument {arg:?} is not valid UTF-8")))
}

/// Parse the arguments after the program name.
fn parse_args(args: &[OsString]) -> std::result::Result<Command, UsageError> {
    let Some(first) = args.first() else {
        return Err(UsageError("no verb given".into()));
    };
    let verb = match text_arg(first)? {
        "solve" => Verb::Solve,
        "analyze" => Verb::Analyze,
        "demo" => Verb::Demo,
        "help" | "-h" | "--help" => return Ok(Command::Help),
        "-V" | "--version" => return Ok(Command::Version),
        other => {
            return Err(UsageError(format!(
                "unknown verb `{other}`; expected solve, analyze, demo or help"
            )))
        }
    };
    let mut o = Options::default();
    let mut rest = args[1..].iter();
    while let Some(arg) = rest.next() {
        let text = text_arg(arg)?;
        // `--name=value` or `--name value`.
        let (name, inline) = match text.split_once('=') {
            Some((n, v)) if n.starts_with("--") => (n, Some(OsString::from(v))),
            _ => (text, None),
        };
        let mut value = |what: &str| -> std::result::Result<PathBuf, UsageError> {
            let v = match inline.clone() {
                Some(v) => v,
                None => rest
                    .next()
                    .cloned()
                    .ok_or_else(|| UsageError(format!("`{name}` needs a {what}")))?,
            };
            if v.is_empty() {
                return Err(UsageError(format!("`{name}` needs a {what}")));
            }
            Ok(PathBuf::from(v))
        };
        let flag_only = |o: &mut bool| -> std::result::Result<(), UsageError> {
            if inline.is_some() {
                return Err(UsageError(format!("`{name}` takes no value")));
            }
            *o = true;
            Ok(())
        };
        match (name, verb) {
            ("-h" | "--help", _) => return Ok(Command::Help),
            ("--json", _) => flag_only(&mut o.json)?,
            ("--explain", _) => flag_only(&mut o.explain)?,
            ("--exhaustive", Verb::Solve) => flag_only(&mut o.exhaustive)?,
            ("--progress", Verb::Solve | Verb::Demo) => flag_only(&mut o.progress)?,
            ("--design", Verb::Analyze) => o.design = Some(value("design file")?),
            ("--spice", _) => o.spice = Some(value("file name")?),
            ("--bom", _) => o.bom = Some(value("file name")?),
            ("--svg", _) => o.svg = Some(value("file name")?),
            (n, v) if n.starts_with('-') && n.len() > 1 => {
                return Err(UsageError(format!(
                    "unknown option `{n}` for `spanfit {}`",
                    v.name()
                )))
            }
            (_, Verb::Demo) => {
                return Err(UsageError(format!(
                    "`spanfit demo` takes no NEED (found `{text}`); it uses the embedded demo need"
                )))
            }
            (_, _) => {
                if o.need_path.is_some() {
                    return Err(UsageError(format!(
                        "one NEED only (found a second: `{text}`)"
                    )));
                }
                o.need_path = Some(PathBuf::from(arg));
            }
        }
    }
    if verb != Verb::Demo && o.need_path.is_none() {
        return Err(UsageError(format!(
            "`spanfit {}` needs a need file (NEED)",
            verb.name()
        )));
    }
    if verb == Verb::Analyze && o.design.is_none() {
        return Err(UsageError(
            "`spanfit analyze` needs `--design DESIGN.json`".into(),
        ));
    }
    Ok(Command::Run(verb, o))
}

/// Read a whole input file, refusing folders and files too large to hold.
fn read_input(path: &Path, what: &str) -> Result<Vec<u8>> {
    let meta = std::fs::metadata(path)
        .with_context(|| format!("cannot read {what} `{}`", path.display()))?;
    if meta.is_dir() {
        bail!("{what} `{}` is a folder; expected a file", path.display());
    }
    if meta.len() > MAX_READ_BYTES {
        bail!(
            "{what} `{}` is {} bytes; no input file may exceed {MAX_READ_BYTES} bytes",
            path.display(),
            meta.len()
        );
    }
    std::fs::read(path).with_context(|| format!("cannot read {what} `{}`", path.display()))
}

/// The stock files of a need: every `*.csv` in the folder its `[stock]
/// path` names (relative to the need file's folder), or none (the
/// embedded demo stock) when it names no folder.
fn read_stock(need_path: &Path, need_bytes: &[u8]) -> Result<Vec<StockFile>> {
    let need = spanfit::need::parse_need(need_bytes, &need_path.display().to_string())?;
    let Some(rel) = need.stock.path else {
        return Ok(Vec::new());
    };
    let base = need_path.parent().unwrap_or_else(|| Path::new(""));
    let folder = base.join(&rel);
    let at = format!("{}, key `stock.path`", need_path.display());
    let entries = std::fs::read_dir(&folder)
        .with_context(|| format!("{at}: cannot read the stock folder `{}`", folder.display()))?;
    let mut paths = Vec::new();
    for entry in entries {
        let entry = entry.with_context(|| {
            format!("{at}: cannot list the stock folder `{}`", folder.display())
        })?;
        let path = entry.path();
        let is_csv = path
            .extension()
            .and_then(|e| e.to_str())
            .is_some_and(|e| e.eq_ignore_ascii_case("csv"));
        if is_csv && path.is_file() {
            paths.push(path);
        }
    }
    paths.sort();
    if paths.is_empty() {
        bail!(
            "{at}: the stock folder `{}` holds no *.csv stock files (expected resistors.csv, opamps.csv, references.csv, inamps.csv, capacitors.csv, networks.csv)",
            folder.display()
        );
    }
    paths
        .iter()
        .map(|p| {
            Ok(StockFile {
                name: p
                    .file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default(),
                bytes: read_input(p, "stock file")?,
            })
        })
        .collect()
}

/// Run a search with the process clock and an optional progress line.
fn solve(need: &[u8], need_name: &str, stock: &[StockFile], o: &Options) -> Result<Bundle> {
    let start = Instant::now();
    let now_ms = move || start.elapsed().as_secs_f64() * 1e3;
    let show = o.progress;
    // At most ten progress lines a second.
    let mut last_shown: Option<Instant> = None;
    let mut progress = |p: Progress| -> bool {
        let due = p.done >= p.total
            || match last_shown {
                None => true,
                Some(t) => t.elapsed().as_millis() >= 100,
            };
        if show && due {
            last_shown = Some(Instant::now());
            let best = p
                .best_cost
                .map(|c| format!(", best cost {c:.3}"))
                .unwrap_or_default();
            eprint!("\rsearching: {} of {} structures{best}   ", p.done, p.total);
        }
        true
    };
    let mut control = SolveControl {
        progress: &mut progress,
        now_ms: &now_ms,
    };
    let bundle = spanfit::api::solve_bundle(need, need_name, stock, o.exhaustive, &mut control);
    if show {
        eprintln!();
    }
    Ok(bundle?)
}

/// Write the requested export files. With no design there is nothing to
/// write: each requested file is named on stderr as not written.
fn write_artifacts(artifacts: &Artifacts, o: &Options) -> Result<()> {
    let wanted = [
        (&o.spice, &artifacts.spice, "SPICE netlist"),
        (&o.bom, &artifacts.bom_csv, "BOM"),
        (&o.svg, &artifacts.svg, "schematic"),
    ];
    for (path, text, what) in wanted {
        let Some(path) = path else { continue };
        match text {
            Some(text) => std::fs::write(path, text)
                .with_context(|| format!("cannot write the {what} to `{}`", path.display()))?,
            None => {
                eprintln!(
                    "spanfit: no design, so no {what} was written to `{}`",
                    path.display()
                );
            }
        }
    }
    Ok(())
}

fn print(text: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())
        .and_then(|_| out.flush())
        .context("cannot write to standard output")
}

/// Run a verb; the exit status on success (0 or 1).
fn run(verb: Verb, o: &Options) -> Result<u8> {
    let (need, need_name, stock) = match verb {
        Verb::Demo => (
            spanfit::demo::NEED_TOML.as_bytes().to_vec(),
            "demo-need.toml (embedded)".to_string(),
            Vec::new(),
        ),
        Verb::Solve | Verb::Analyze => {
            let need_path = o.need_path.as_deref().unwrap_or_else(|| Path::new(""));
            let bytes = read_input(need_path, "NEED")?;
            let stock = read_stock(need_path, &bytes)?;
            (bytes, need_path.display().to_string(), stock)
        }
    };
    let bundle = match verb {
        Verb::Solve | Verb::Demo => solve(&need, &need_name, &stock, o)?,
        Verb::Analyze => {
            let design_path = o.design.as_deref().unwrap_or_else(|| Path::new(""));
            let design = read_input(design_path, "design file")?;
            spanfit::api::analyze_bundle(
                &need,
                &need_name,
                &stock,
                &design,
                &design_path.display().to_string(),
            )?
        }
    };
    write_artifacts(&bundle.artifacts, o)?;
    let report = &bundle.report;
    if o.json {
        let mut s = serde_json::to_string_pretty(report).context("cannot format the report")?;
        s.push('\n');
        print(&s)?;
    } else {
        print(&bundle.text)?;
        if let (true, Some(design)) = (o.explain, report.design.as_ref()) {
            print(&spanfit::report::text::explain_text(design))?;
        }
    }
    let reason = report.reason.as_deref().unwrap_or("no reason given");
    match report.status {
        Status::Ok => Ok(0),
        Status::Infeasible => {
            eprintln!("spanfit: no design meets the need: {reason}");
            Ok(1)
        }
        Status::Unfinished => {
            eprintln!("spanfit: the search did not finish: {reason}");
            Ok(3)
        }
    }
}

fn main() -> ExitCode {
    let args: Vec<OsString> = std::env::args_os().skip(1).collect();
    match parse_args(&args) {
        Ok(Command::Help) => {
            print!("{USAGE}");
            ExitCode::SUCCESS
        }
        Ok(Command::Version) => {
            println!("spanfit {}", env!("CARGO_PKG_VERSION"));
            ExitCode::SUCCESS
        }
        Ok(Command::Run(verb, o)) => match run(verb, &o) {
            Ok(code) => ExitCode::from(code),
            Err(e) => {
                eprintln!("spanfit: {e:#}");
                ExitCode::from(2)
            }
        },
        Err(UsageError(message)) => {
            eprintln!("spanfit: {message}\n\n{USAGE}");
            ExitCode::from(2)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn args(list: &[&str]) -> Vec<OsString> {
        list.iter().map(OsString::from).collect()
    }

    #[test]
    fn solve_takes_its_options() {
        let Ok(Command::Run(Verb::Solve, o)) = parse_args(&args(&[
            "solve",
            "need.toml",
            "--json",
            "--exhaustive",
            "--spice=out.cir",
            "--bom",
            "bom.csv",
        ])) else {
            panic!("did not parse");
        };
        assert_eq!(o.need_path.as_deref(), Some(Path::new("need.toml")));
        assert!(o.json && o.exhaustive && !o.progress);
        assert_eq!(o.spice.as_deref(), Some(Path::new("out.cir")));
        assert_eq!(o.bom.as_deref(), Some(Path::new("bom.csv")));
        assert!(o.svg.is_none());
    }

    #[test]
    fn options_belong_to_their_verbs() {
        let e = parse_args(&args(&["demo", "--exhaustive"])).unwrap_err();
        assert!(e.0.contains("--exhaustive"), "{e:?}");
        let e = parse_args(&args(&["analyze", "need.toml"])).unwrap_err();
        assert!(e.0.contains("--design"), "{e:?}");
        let e = parse_args(&args(&["solve"])).unwrap_err();
        assert!(e.0.contains("NEED"), "{e:?}");
        let e = parse_args(&args(&["solve", "a.toml", "b.toml"])).unwrap_err();
        assert!(e.0.contains("b.toml"), "{e:?}");
        let e = parse_args(&args(&["solve", "a.toml", "--svg"])).unwrap_err();
        assert!(e.0.contains("--svg"), "{e:?}");
        let e = parse_args(&args(&["solve", "a.toml", "--json=yes"])).unwrap_err();
        assert!(e.0.contains("no value"), "{e:?}");
        assert!(parse_args(&args(&[])).is_err());
    }

    #[test]
    fn help_anywhere() {
        assert!(matches!(parse_args(&args(&["help"])), Ok(Command::Help)));
        assert!(matches!(
            parse_args(&args(&["solve", "--help"])),
            Ok(Command::Help)
        ));
    }
}
