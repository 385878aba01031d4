//! Project automation behind `cargo xtask TASK` (see `.cargo/config.toml`).
//!
//! Tasks:
//! - `test`  — everything CI checks, in order, stopping at the first failure.
//! - `serve` — builds the page (wasm + glue + demo) into `target/site/` and serves it on
//!   127.0.0.1, after showing the CLI's analysis of the demo recording.
//! - `dist`  — writes `dist/site/`, a folder any static host can serve (relative URLs only),
//!   and `dist/noisesonde.html`, one file with everything inside that works from file://.
//! - `bench` — builds the streaming benchmark example and runs `xtask/bench.py` (native vs
//!   numpy/scipy, `target/bench-results.md`), then `xtask/bench_page.mjs` (the page in headless
//!   Chromium vs the native CLI, `target/bench-page.md`).
//! - `help`  — lists the tasks.
//! - `measure REPORT -- PROGRAM ARGS…` — internal, for `bench.py`: runs one program and writes its
//!   wall time and peak resident memory to REPORT (see [`measure`]).
//!
//! Invariants: std only (no dependencies, so this builds in seconds on a clean machine); every
//! command runs in the workspace root and is printed before it runs (`==> …`); any install a
//! clean machine needs (wasm target, Python packages) happens here, so CI and a newcomer run
//! the same thing.

use std::env;
use std::ffi::OsString;
use std::fmt;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode};

/// Rust target of the browser build.
const WASM_TARGET: &str = "wasm32-unknown-unknown";
/// Rustup components the lint steps need.
const RUST_COMPONENTS: [&str; 2] = ["rustfmt", "clippy"];
/// Pinned Python packages for the reference vectors and the end-to-end tests.
const PY_REQUIREMENTS: &str = "tests/requirements.txt";
/// Folder of the CLI's end-to-end tests (written alongside the CLI).
const PY_E2E_DIR: &str = "tests/python";
/// Example that writes WAV files with the crate's writer, for tests/python/test_wav_writer.py.
const WAV_WRITE_EXAMPLE: &str = "wav_write";
/// pytest's exit status when it collected no test.
const PYTEST_NO_TESTS_COLLECTED: i32 = 5;
/// Demo recording that `serve` analyses, with its calibration.
const DEMO_RECORDING: &str = "demo-data/preamp-shorted-input-24bit-48000hz-mono.wav";
const DEMO_SCALE_UNITS_PER_FS: &str = "2.0";
const DEMO_UNIT: &str = "V";

const HELP: &str = "\
usage: cargo xtask TASK

tasks:
  test   run every check CI runs: toolchain and Python setup, rustfmt, clippy,
         cargo test, reference-vector regeneration, wasm32 core build, CLI end-to-end tests,
         page end-to-end tests
  test-page
         only the page end-to-end tests (builds the page, the single file and the CLI first)
  serve  build the page (wasm, glue, demo recording) into target/site/ and serve it on
         http://127.0.0.1:PORT/ (PORT from NOISESONDE_PORT, default 8000 or the next free one)
  dist   write dist/site/, the static page for any web host, and dist/noisesonde.html,
         one self-contained file that works when opened from disk (file://)
  bench  build examples/bench.rs (release) and compare it with numpy/scipy via xtask/bench.py
         (target/bench-results.md); then time the page in headless Chromium against the
         native CLI via xtask/bench_page.mjs (target/bench-page.md); then live listening
         (frames per second, worker load) via xtask/bench_live.mjs (target/bench-live.md)
  help   show this text

internal (used by xtask/bench.py):
  measure REPORT -- PROGRAM ARGS...   run PROGRAM, write its wall time and peak RSS to REPORT
";

/// Why a step stopped.
#[derive(Debug)]
struct Failure(String);

impl fmt::Display for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

type StepResult = Result<Outcome, Failure>;

/// How a step that did not fail ended.
enum Outcome {
    Passed,
    Skipped(String),
}

/// The workspace and the tools found in it.
struct Ctx {
    root: PathBuf,
    cargo: OsString,
}

impl Ctx {
    fn new() -> Self {
        let manifest_dir = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
        let root = manifest_dir
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or(manifest_dir);
        // Under `cargo run`, CARGO names the cargo that started us (same toolchain).
        let cargo = env::var_os("CARGO").unwrap_or_else(|| OsString::from("cargo"));
        Self { root, cargo }
    }

    fn cargo(&self, args: &[&str]) -> Cmd {
        Cmd::new(&self.root, self.cargo.clone(), "cargo", args)
    }

    fn tool(&self, program: &str, args: &[&str]) -> Cmd {
        Cmd::new(&self.root, OsString::from(program), program, args)
    }

    fn release_cli(&self) -> PathBuf {
        self.root.join("target/release/noisesonde")
    }
}

/// One external command, printed before it runs.
struct Cmd {
    command: Command,
    shown: String,
}

impl Cmd {
    fn new(root: &Path, program: OsString, shown_program: &str, args: &[&str]) -> Self {
        let mut command = Command::new(program);
        command.args(args).current_dir(root);
        let mut shown = String::from(shown_program);
        for arg in args {
            shown.push(' ');
            shown.push_str(arg);
        }
        Self { command, shown }
    }

    fn arg(mut self, arg: impl AsRef<std::ffi::OsStr>) -> Self {
        let arg = arg.as_ref();
        self.shown.push(' ');
        self.shown.push_str(&arg.to_string_lossy());
        self.command.arg(arg);
        self
    }

    fn env(mut self, key: &str, value: impl AsRef<std::ffi::OsStr>) -> Self {
        let value = value.as_ref();
        self.shown = format!("{key}={} {}", value.to_string_lossy(), self.shown);
        self.command.env(key, value);
        self
    }

    /// Runs with inherited stdio; fails on a non-zero exit or a spawn error.
    fn run(mut self) -> Result<(), Failure> {
        println!("==> {}", self.shown);
        match self.command.status() {
            Ok(status) if status.success() => Ok(()),
            Ok(status) => Err(Failure(format!("`{}` failed ({status})", self.shown))),
            Err(err) => Err(Failure(format!("could not start `{}`: {err}", self.shown))),
        }
    }

    /// Runs with inherited stdio and returns the exit code (None when killed by a signal).
    fn run_code(mut self) -> Result<Option<i32>, Failure> {
        println!("==> {}", self.shown);
        self.command
            .status()
            .map(|status| status.code())
            .map_err(|err| Failure(format!("could not start `{}`: {err}", self.shown)))
    }

    /// Runs quietly (a probe, not a step): stdout on success, None on failure or spawn error.
    fn probe(mut self) -> Option<String> {
        let output = self.command.output().ok()?;
        output
            .status
            .success()
            .then(|| String::from_utf8_lossy(&output.stdout).into_owned())
    }
}

type Step = (&'static str, fn(&Ctx) -> StepResult);

/// Runs steps in order, stopping at the first failure; prints a closing count line.
fn run_steps(task: &str, ctx: &Ctx, steps: &[Step]) -> ExitCode {
    let (mut passed, mut skipped) = (0, 0);
    for (name, step) in steps {
        println!("\n=== {task}: {name}");
        match step(ctx) {
            Ok(Outcome::Passed) => passed += 1,
            Ok(Outcome::Skipped(why)) => {
                println!("--- skipped {name}: {why}");
                skipped += 1;
            }
            Err(failure) => {
                eprintln!("\nxtask {task}: FAILED at step \"{name}\": {failure}");
                println!(
                    "xtask-{task}: {passed} passed, 1 failed{}",
                    skipped_note(skipped)
                );
                return ExitCode::FAILURE;
            }
        }
    }
    println!(
        "\nxtask-{task}: {passed} passed, 0 failed{}",
        skipped_note(skipped)
    );
    ExitCode::SUCCESS
}

fn skipped_note(skipped: usize) -> String {
    if skipped == 0 {
        String::new()
    } else {
        format!(", {skipped} skipped")
    }
}

fn main() -> ExitCode {
    let args: Vec<String> = env::args().skip(1).collect();
    let ctx = Ctx::new();
    match args.first().map(String::as_str) {
        Some("test") if args.len() == 1 => run_steps("test", &ctx, TEST_STEPS),
        Some("test-page") if args.len() == 1 => run_steps("test-page", &ctx, PAGE_TEST_STEPS),
        Some("serve") if args.len() == 1 => run_steps("serve", &ctx, SERVE_STEPS),
        Some("dist") if args.len() == 1 => run_steps("dist", &ctx, DIST_STEPS),
        Some("bench") if args.len() == 1 => run_steps("bench", &ctx, BENCH_STEPS),
        Some("measure") => measure(&args[1..]),
        Some("help" | "-h" | "--help") => {
            print!("{HELP}");
            ExitCode::SUCCESS
        }
        None => {
            eprint!("xtask: no task given\n\n{HELP}");
            ExitCode::FAILURE
        }
        Some(_) => {
            eprint!(
                "xtask: unknown task or extra arguments: {}\n\n{HELP}",
                args.join(" ")
            );
            ExitCode::FAILURE
        }
    }
}

// ---------------------------------------------------------------- test

const TEST_STEPS: &[Step] = &[
    (
        "rust toolchain (rustfmt, clippy, wasm32 target)",
        ensure_rust_toolchain,
    ),
    (
        "python packages (tests/requirements.txt)",
        ensure_python_deps,
    ),
    ("cargo fmt --check", fmt_check),
    ("cargo clippy", clippy),
    ("cargo test", cargo_test),
    (
        "reference vectors regenerate and compare",
        reference_vectors,
    ),
    ("wasm32 core build without the CLI", wasm_core_build),
    ("CLI end-to-end tests (pytest)", cli_end_to_end),
    (
        "page end-to-end tests (headless Chromium)",
        browser_end_to_end,
    ),
];

/// The last step of `test` alone, for work on the page.
const PAGE_TEST_STEPS: &[Step] = &[(
    "page end-to-end tests (headless Chromium)",
    browser_end_to_end,
)];

/// Adds the rustup components and the wasm32 target when missing (no-op when present).
/// Without rustup (a distribution toolchain), it checks nothing and leaves failures to the
/// steps that need them.
fn ensure_rust_toolchain(ctx: &Ctx) -> StepResult {
    let Some(components) = ctx
        .tool("rustup", &["component", "list", "--installed"])
        .probe()
    else {
        return Ok(Outcome::Skipped(
            "rustup not found; using the toolchain on PATH as it is".into(),
        ));
    };
    let missing: Vec<&str> = RUST_COMPONENTS
        .iter()
        .copied()
        .filter(|name| !components.lines().any(|line| line.starts_with(name)))
        .collect();
    if missing.is_empty() {
        println!("rustup components present: {}", RUST_COMPONENTS.join(", "));
    } else {
        let mut args = vec!["component", "add"];
        args.extend(&missing);
        ctx.tool("rustup", &args).run()?;
    }
    let targets = ctx
        .tool("rustup", &["target", "list", "--installed"])
        .probe()
        .unwrap_or_default();
    if targets.lines().any(|line| line.trim() == WASM_TARGET) {
        println!("rustup target present: {WASM_TARGET}");
    } else {
        ctx.tool("rustup", &["target", "add", WASM_TARGET]).run()?;
    }
    Ok(Outcome::Passed)
}

/// Pinned `name==version` lines of the requirements file.
fn pinned_requirements(ctx: &Ctx) -> Result<Vec<(String, String)>, Failure> {
    let path = ctx.root.join(PY_REQUIREMENTS);
    let text = fs::read_to_string(&path)
        .map_err(|err| Failure(format!("cannot read {}: {err}", path.display())))?;
    let mut pins = Vec::new();
    for line in text.lines() {
        let line = line.split('#').next().unwrap_or("").trim();
        if line.is_empty() {
            continue;
        }
        let Some((name, version)) = line.split_once("==") else {
            return Err(Failure(format!(
                "{PY_REQUIREMENTS}: `{line}` is not pinned as name==version"
            )));
        };
        pins.push((name.trim().to_string(), version.trim().to_string()));
    }
    Ok(pins)
}

/// The installed versions of the pinned packages, or why they could not be read.
fn installed_python_versions(ctx: &Ctx, pins: &[(String, String)]) -> Result<Vec<String>, String> {
    let modules: Vec<String> = pins
        .iter()
        .map(|(name, _)| name.to_ascii_lowercase().replace('-', "_"))
        .collect();
    let script = format!(
        "import {}\nprint({})",
        modules.join(", "),
        modules
            .iter()
            .map(|m| format!("{m}.__version__"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    ctx.tool("python3", &["-c", &script])
        .probe()
        .map(|out| out.split_whitespace().map(str::to_string).collect())
        .ok_or_else(|| format!("python3 cannot import {}", modules.join(", ")))
}

fn python_deps_mismatch(ctx: &Ctx, pins: &[(String, String)]) -> Option<String> {
    match installed_python_versions(ctx, pins) {
        Err(why) => Some(why),
        Ok(found) => {
            let wrong: Vec<String> = pins
                .iter()
                .zip(found.iter().map(Some).chain(std::iter::repeat(None)))
                .filter(|((_, want), got)| got.map(String::as_str) != Some(want.as_str()))
                .map(|((name, want), got)| {
                    format!("{name} {} (want {want})", got.map_or("?", |g| g.as_str()))
                })
                .collect();
            (!wrong.is_empty()).then(|| format!("version mismatch: {}", wrong.join(", ")))
        }
    }
}

/// Installs the pinned Python packages unless exactly those versions are importable.
fn ensure_python_deps(ctx: &Ctx) -> StepResult {
    let pins = pinned_requirements(ctx)?;
    let shown: Vec<String> = pins.iter().map(|(n, v)| format!("{n}=={v}")).collect();
    match python_deps_mismatch(ctx, &pins) {
        None => println!("python packages present: {}", shown.join(" ")),
        Some(why) => {
            println!("{why}; installing {PY_REQUIREMENTS}");
            ctx.tool(
                "python3",
                &[
                    "-m",
                    "pip",
                    "install",
                    "--quiet",
                    "--disable-pip-version-check",
                    "-r",
                    PY_REQUIREMENTS,
                ],
            )
            .run()?;
            if let Some(why) = python_deps_mismatch(ctx, &pins) {
                return Err(Failure(format!("after pip install: {why}")));
            }
            println!("python packages now: {}", shown.join(" "));
        }
    }
    Ok(Outcome::Passed)
}

fn fmt_check(ctx: &Ctx) -> StepResult {
    ctx.cargo(&["fmt", "--all", "--", "--check"])
        .run()
        .map_err(|f| Failure(format!("{f} (run `cargo fmt --all` to fix)")))?;
    Ok(Outcome::Passed)
}

fn clippy(ctx: &Ctx) -> StepResult {
    ctx.cargo(&[
        "clippy",
        "--workspace",
        "--all-targets",
        "--",
        "-D",
        "warnings",
    ])
    .run()?;
    Ok(Outcome::Passed)
}

fn cargo_test(ctx: &Ctx) -> StepResult {
    ctx.cargo(&["test", "--workspace"]).run()?;
    Ok(Outcome::Passed)
}

/// Regenerates the reference vectors with the pinned numpy/scipy into a temporary folder and
/// compares them with the committed copy.
fn reference_vectors(ctx: &Ctx) -> StepResult {
    let dir = env::temp_dir().join(format!("noisesonde-reference-{}", std::process::id()));
    if dir.exists() {
        fs::remove_dir_all(&dir)
            .map_err(|err| Failure(format!("cannot clear {}: {err}", dir.display())))?;
    }
    fs::create_dir_all(&dir)
        .map_err(|err| Failure(format!("cannot create {}: {err}", dir.display())))?;
    let result = ctx
        .tool("python3", &["tests/reference/generate.py"])
        .arg(&dir)
        .run()
        .and_then(|()| {
            ctx.tool(
                "python3",
                &["tests/reference/compare.py", "tests/reference"],
            )
            .arg(&dir)
            .run()
        });
    // Keep the regenerated files when they differ, so they can be inspected.
    match result {
        Ok(()) => {
            let _ = fs::remove_dir_all(&dir);
            Ok(Outcome::Passed)
        }
        Err(f) => Err(Failure(format!(
            "{f}; regenerated files kept in {}",
            dir.display()
        ))),
    }
}

fn wasm_core_build(ctx: &Ctx) -> StepResult {
    ctx.cargo(&[
        "build",
        "--lib",
        "--no-default-features",
        "--target",
        WASM_TARGET,
    ])
    .run()?;
    Ok(Outcome::Passed)
}

fn build_release_cli(ctx: &Ctx) -> Result<PathBuf, Failure> {
    ctx.cargo(&["build", "--release", "--bin", "noisesonde"])
        .run()?;
    let bin = ctx.release_cli();
    if !bin.is_file() {
        return Err(Failure(format!("{} was not built", bin.display())));
    }
    Ok(bin)
}

/// Builds the release CLI and the WAV-writer example, and runs the end-to-end pytest suite
/// against them.
fn cli_end_to_end(ctx: &Ctx) -> StepResult {
    if !ctx.root.join(PY_E2E_DIR).is_dir() {
        return Ok(Outcome::Skipped(format!(
            "{PY_E2E_DIR}/ does not exist yet; no CLI end-to-end tests to run"
        )));
    }
    let bin = build_release_cli(ctx)?;
    ctx.cargo(&["build", "--release", "--example", WAV_WRITE_EXAMPLE])
        .run()?;
    let wav_write = ctx
        .root
        .join("target/release/examples")
        .join(WAV_WRITE_EXAMPLE);
    let code = ctx
        .tool("python3", &["-m", "pytest", PY_E2E_DIR, "-q"])
        .env("NOISESONDE_BIN", &bin)
        .env("NOISESONDE_WAV_WRITE", &wav_write)
        .run_code()?;
    match code {
        Some(0) => Ok(Outcome::Passed),
        Some(PYTEST_NO_TESTS_COLLECTED) => Err(Failure(format!(
            "pytest collected no tests in {PY_E2E_DIR}/ (exit {PYTEST_NO_TESTS_COLLECTED})"
        ))),
        Some(code) => Err(Failure(format!("pytest exited with {code}"))),
        None => Err(Failure("pytest was killed by a signal".into())),
    }
}

// ---------------------------------------------------------------- serve

const SERVE_STEPS: &[Step] = &[
    ("release CLI on the demo recording", demo_analysis),
    ("build the page", build_site_step),
    ("serve the page on 127.0.0.1", serve_site),
];

const DIST_STEPS: &[Step] = &[
    ("build the page", build_site_step),
    ("write dist/site", dist_site),
    (
        "write dist/noisesonde.html (one file, works from file://)",
        dist_single_step,
    ),
];

fn demo_analysis(ctx: &Ctx) -> StepResult {
    let bin = build_release_cli(ctx)?;
    Cmd::new(
        &ctx.root,
        bin.clone().into_os_string(),
        "target/release/noisesonde",
        &[],
    )
    .arg("analyze")
    .arg(DEMO_RECORDING)
    .arg("--scale")
    .arg(DEMO_SCALE_UNITS_PER_FS)
    .arg("--unit")
    .arg(DEMO_UNIT)
    .run()?;
    Ok(Outcome::Passed)
}

// ---------------------------------------------------------------- the page

/// Where the assembled page goes (served by `serve`, copied by `dist`, tested by `test`).
const SITE_DIR: &str = "target/site";
/// The page's own files, copied as they are.
const PAGE_FILES: [&str; 9] = [
    "index.html",
    "app.js",
    "dom.js",
    "live.js",
    "capture-worklet.js",
    "worker.js",
    "protocol.js",
    "platform.js",
    "style.css",
];
/// Output of wasm-bindgen, inside the site.
const PKG_DIR: &str = "pkg";
/// The demo recording's place inside the site (app.js fetches it from there).
const SITE_DEMO: &str = "demo/preamp-shorted-input-24bit-48000hz-mono.wav";

/// The wasm-bindgen version pinned in Cargo.lock (the CLI must match the crate exactly).
fn pinned_wasm_bindgen(ctx: &Ctx) -> Result<String, Failure> {
    let lock = fs::read_to_string(ctx.root.join("Cargo.lock"))
        .map_err(|err| Failure(format!("cannot read Cargo.lock: {err}")))?;
    let mut lines = lock.lines();
    while let Some(line) = lines.next() {
        if line == "name = \"wasm-bindgen\"" {
            if let Some(version) = lines
                .next()
                .and_then(|l| l.strip_prefix("version = \""))
                .and_then(|l| l.strip_suffix('"'))
            {
                return Ok(version.to_string());
            }
        }
    }
    Err(Failure("Cargo.lock pins no wasm-bindgen version".into()))
}

/// Installs the wasm-bindgen CLI at the pinned version unless it is already there.
fn ensure_wasm_bindgen(ctx: &Ctx) -> Result<(), Failure> {
    let version = pinned_wasm_bindgen(ctx)?;
    let installed = ctx.tool("wasm-bindgen", &["--version"]).probe();
    if installed
        .as_deref()
        .is_some_and(|v| v.split_whitespace().nth(1) == Some(version.as_str()))
    {
        return Ok(());
    }
    println!(
        "--- installing wasm-bindgen-cli {version} (found: {}); this takes several minutes, once",
        installed.as_deref().map_or("none", str::trim)
    );
    // `--locked` fails for this package on the registry mirror here (see shared TOOLCHAIN notes).
    ctx.cargo(&["install", "wasm-bindgen-cli", "--version"])
        .arg(format!("={version}"))
        .run()
}

/// Runs wasm-bindgen for `target` (`web` or `no-modules`) on the release wasm, writing the glue
/// and `noisesonde_bg.wasm` into `out_dir`, then optimises the wasm.
fn bind_wasm(ctx: &Ctx, target: &str, out_dir: &Path) -> Result<(), Failure> {
    let wasm = ctx
        .root
        .join("target")
        .join(WASM_TARGET)
        .join("release/noisesonde.wasm");
    // The name section is a fifth of the module; panic messages stay readable without it.
    ctx.tool(
        "wasm-bindgen",
        &[
            "--target",
            target,
            "--no-typescript",
            "--remove-name-section",
            "--out-dir",
        ],
    )
    .arg(out_dir)
    .arg(&wasm)
    .run()?;
    optimise_wasm(ctx, &out_dir.join("noisesonde_bg.wasm"))
}

/// binaryen's wasm-opt from the npm package in tests/browser (Debian's binaryen is too old to
/// read current rustc output; see the shared toolchain notes).
const WASM_OPT: &str = "tests/browser/node_modules/.bin/wasm-opt";

/// Runs `wasm-opt -O3` over a wasm-bindgen output in place: smaller (the page's module stays
/// under 1 MB) and no slower. The features come from the module's target_features section.
fn optimise_wasm(ctx: &Ctx, wasm: &Path) -> Result<(), Failure> {
    ctx.tool(WASM_OPT, &["-O3"])
        .arg(wasm)
        .arg("-o")
        .arg(wasm)
        .run()
}

fn copy_into(from: &Path, to: &Path) -> Result<(), Failure> {
    if let Some(parent) = to.parent() {
        fs::create_dir_all(parent)
            .map_err(|err| Failure(format!("cannot create {}: {err}", parent.display())))?;
    }
    fs::copy(from, to).map(|_| ()).map_err(|err| {
        Failure(format!(
            "cannot copy {} to {}: {err}",
            from.display(),
            to.display()
        ))
    })
}

/// Builds the wasm module with the `web` feature, runs wasm-bindgen into `www/pkg/`, and
/// assembles `target/site/` from `www/`, the glue and the demo recording.
fn build_site(ctx: &Ctx) -> Result<PathBuf, Failure> {
    ensure_rust_toolchain(ctx)?;
    ensure_wasm_bindgen(ctx)?;
    ensure_node_packages(ctx)?;
    ctx.cargo(&[
        "build",
        "--lib",
        "--release",
        "--target",
        WASM_TARGET,
        "--no-default-features",
        "--features",
        "web",
    ])
    .run()?;
    let site = ctx.root.join(SITE_DIR);
    if site.exists() {
        fs::remove_dir_all(&site)
            .map_err(|err| Failure(format!("cannot clear {}: {err}", site.display())))?;
    }
    // The glue goes beside the page's sources (www/pkg, ignored by git), so www/ itself is a
    // working page for any static server; the site gets a copy.
    let glue = ctx.root.join("www").join(PKG_DIR);
    if glue.exists() {
        fs::remove_dir_all(&glue)
            .map_err(|err| Failure(format!("cannot clear {}: {err}", glue.display())))?;
    }
    bind_wasm(ctx, "web", &glue)?;
    copy_tree(&glue, &site.join(PKG_DIR))?;
    for file in PAGE_FILES {
        copy_into(&ctx.root.join("www").join(file), &site.join(file))?;
    }
    copy_into(&ctx.root.join(DEMO_RECORDING), &site.join(SITE_DEMO))?;
    Ok(site)
}

fn build_site_step(ctx: &Ctx) -> StepResult {
    let site = build_site(ctx)?;
    let wasm_len = fs::metadata(site.join(PKG_DIR).join("noisesonde_bg.wasm"))
        .map(|m| m.len())
        .unwrap_or(0);
    println!(
        "--- page assembled in {} (wasm {wasm_len} bytes)",
        site.display()
    );
    Ok(Outcome::Passed)
}

fn dist_site(ctx: &Ctx) -> StepResult {
    let from = ctx.root.join(SITE_DIR);
    let to = ctx.root.join("dist/site");
    if to.exists() {
        fs::remove_dir_all(&to)
            .map_err(|err| Failure(format!("cannot clear {}: {err}", to.display())))?;
    }
    copy_tree(&from, &to)?;
    println!("--- dist/site written: serve it from any static host, under any path");
    Ok(Outcome::Passed)
}

fn copy_tree(from: &Path, to: &Path) -> Result<(), Failure> {
    let entries = fs::read_dir(from)
        .map_err(|err| Failure(format!("cannot read {}: {err}", from.display())))?;
    for entry in entries {
        let entry =
            entry.map_err(|err| Failure(format!("cannot read {}: {err}", from.display())))?;
        let path = entry.path();
        let target = to.join(entry.file_name());
        if path.is_dir() {
            copy_tree(&path, &target)?;
        } else {
            copy_into(&path, &target)?;
        }
    }
    Ok(())
}

/// The single file's policy: inline script and style only, workers from blob: URLs, no
/// connections at all (the wasm and the demo are inside the file).
const SINGLE_FILE_CSP: &str = "default-src 'none'; script-src 'unsafe-inline' 'wasm-unsafe-eval'; worker-src blob:; connect-src 'none'; img-src blob: data:; style-src 'unsafe-inline'; font-src 'none'; object-src 'none'; media-src 'none'; frame-src 'none'; base-uri 'none'; form-action 'none'";

/// Standard base64 (RFC 4648 §4) with padding.
fn base64(bytes: &[u8]) -> String {
    const ALPHABET: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut out = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for chunk in bytes.chunks(3) {
        let b = [
            chunk[0],
            *chunk.get(1).unwrap_or(&0),
            *chunk.get(2).unwrap_or(&0),
        ];
        let n = (u32::from(b[0]) << 16) | (u32::from(b[1]) << 8) | u32::from(b[2]);
        for (i, shift) in [18, 12, 6, 0].into_iter().enumerate() {
            if i <= chunk.len() {
                out.push(char::from(ALPHABET[((n >> shift) & 63) as usize]));
            } else {
                out.push('=');
            }
        }
    }
    out
}

/// A JavaScript string literal for `text` (JSON string syntax is valid JavaScript).
fn js_string(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    out.push('"');
    for c in text.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            '<' => out.push_str("\\u003c"),
            c if (c as u32) < 0x20 || c == '\u{2028}' || c == '\u{2029}' => {
                out.push_str(&format!("\\u{:04x}", c as u32));
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// A page script without its ES-module lines (`import …;` removed, `export ` dropped).
fn without_module_syntax(source: &str) -> String {
    source
        .lines()
        .filter(|line| !line.trim_start().starts_with("import "))
        .map(|line| line.strip_prefix("export ").unwrap_or(line))
        .collect::<Vec<_>>()
        .join("\n")
}

fn read_text(path: &Path) -> Result<String, Failure> {
    fs::read_to_string(path)
        .map_err(|err| Failure(format!("cannot read {}: {err}", path.display())))
}

/// Writes dist/noisesonde.html: the page with its styles, scripts, wasm and demo recording
/// inside, for opening from file:// (where ES modules and fetch are blocked). The glue is
/// wasm-bindgen's `no-modules` build; the worker starts from a blob: URL as a classic worker and
/// receives the compiled module from the page.
fn dist_single(ctx: &Ctx) -> Result<PathBuf, Failure> {
    let glue_dir = ctx.root.join("target/single-file-pkg");
    bind_wasm(ctx, "no-modules", &glue_dir)?;
    let glue = read_text(&glue_dir.join("noisesonde.js"))?;
    let wasm_bytes = fs::read(glue_dir.join("noisesonde_bg.wasm"))
        .map_err(|err| Failure(format!("cannot read the wasm: {err}")))?;
    let demo_bytes = fs::read(ctx.root.join(DEMO_RECORDING))
        .map_err(|err| Failure(format!("cannot read {DEMO_RECORDING}: {err}")))?;
    let www = ctx.root.join("www");
    let protocol = without_module_syntax(&read_text(&www.join("protocol.js"))?);
    let worker = without_module_syntax(&read_text(&www.join("worker.js"))?);
    let dom = without_module_syntax(&read_text(&www.join("dom.js"))?);
    let live = without_module_syntax(&read_text(&www.join("live.js"))?);
    let app = without_module_syntax(&read_text(&www.join("app.js"))?);
    let style = read_text(&www.join("style.css"))?;
    let html = read_text(&www.join("index.html"))?;
    let demo_name = Path::new(DEMO_RECORDING)
        .file_name()
        .map_or_else(String::new, |n| n.to_string_lossy().into_owned());

    let worker_source = format!(
        "{glue}\n{protocol}\nconst init = wasm_bindgen;\nconst {{ analyze_file, analyze_ensemble_files, LiveSession }} = wasm_bindgen;\n{worker}\n"
    );
    let platform = format!(
        r#"// Single-file platform: the wasm and the demo recording are inside this page.
const WASM_BASE64 = "{wasm}";
const DEMO_BASE64 = "{demo}";
const WORKER_SOURCE = {worker_source};
function fromBase64(text) {{
  const binary = atob(text);
  const bytes = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i += 1) bytes[i] = binary.charCodeAt(i);
  return bytes;
}}
async function wasmBytes() {{ return fromBase64(WASM_BASE64); }}
function createWorker() {{
  const url = URL.createObjectURL(new Blob([WORKER_SOURCE], {{ type: 'text/javascript' }}));
  return new Worker(url);
}}
async function demoFile() {{
  return new File([fromBase64(DEMO_BASE64)], {demo_name}, {{ type: 'audio/wav' }});
}}
// Listening needs a served page: a worklet cannot start from this file.
function captureWorkletUrl() {{ return null; }}
"#,
        wasm = base64(&wasm_bytes),
        demo = base64(&demo_bytes),
        worker_source = js_string(&worker_source),
        demo_name = js_string(&demo_name),
    );
    let script = format!(
        "{glue}\n{protocol}\n{platform}\nconst init = wasm_bindgen;\nconst {{ ReportView, draw_ensemble }} = wasm_bindgen;\n{dom}\n{live}\n{app}\n"
    )
    .replace("</script", "<\\/script");

    let head_script = "<script type=\"module\" src=\"app.js\"></script>\n";
    let stylesheet = "<link rel=\"stylesheet\" href=\"style.css\">";
    let csp_start = html
        .find("<meta http-equiv=\"Content-Security-Policy\" content=\"")
        .ok_or_else(|| Failure("www/index.html has no Content-Security-Policy meta".into()))?;
    let csp_value_start =
        csp_start + "<meta http-equiv=\"Content-Security-Policy\" content=\"".len();
    let csp_value_end = html[csp_value_start..]
        .find('"')
        .map(|i| csp_value_start + i)
        .ok_or_else(|| Failure("unterminated Content-Security-Policy meta".into()))?;
    let mut page = format!(
        "{}{SINGLE_FILE_CSP}{}",
        &html[..csp_value_start],
        &html[csp_value_end..]
    );
    for needle in [head_script, stylesheet, "</body>"] {
        if !page.contains(needle) {
            return Err(Failure(format!("www/index.html lacks `{}`", needle.trim())));
        }
    }
    page = page
        .replace(head_script, "")
        .replace(stylesheet, &format!("<style>\n{style}</style>"))
        .replace("</body>", &format!("<script>\n{script}</script>\n</body>"));
    let out = ctx.root.join("dist/noisesonde.html");
    if let Some(parent) = out.parent() {
        fs::create_dir_all(parent)
            .map_err(|err| Failure(format!("cannot create {}: {err}", parent.display())))?;
    }
    fs::write(&out, page)
        .map_err(|err| Failure(format!("cannot write {}: {err}", out.display())))?;
    Ok(out)
}

fn dist_single_step(ctx: &Ctx) -> StepResult {
    let out = dist_single(ctx)?;
    let len = fs::metadata(&out).map(|m| m.len()).unwrap_or(0);
    println!(
        "--- {} written ({len} bytes): open it from disk, no server needed",
        out.display()
    );
    Ok(Outcome::Passed)
}

/// First free port on 127.0.0.1 from `start` on.
fn free_port(start: u16) -> Result<u16, Failure> {
    (start..start.saturating_add(100))
        .find(|&port| std::net::TcpListener::bind(("127.0.0.1", port)).is_ok())
        .ok_or_else(|| Failure(format!("no free port on 127.0.0.1 from {start}")))
}

/// A static file server on 127.0.0.1 (Python's http.server, which serves .wasm as
/// application/wasm), killed when dropped.
struct Server {
    child: std::process::Child,
    url: String,
}

impl Server {
    fn start(ctx: &Ctx, site: &Path, port: u16) -> Result<Self, Failure> {
        let child = Command::new("python3")
            .args([
                "-m",
                "http.server",
                &port.to_string(),
                "--bind",
                "127.0.0.1",
                "--directory",
            ])
            .arg(site)
            .current_dir(&ctx.root)
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
            .spawn()
            .map_err(|err| Failure(format!("cannot start python3 -m http.server: {err}")))?;
        let url = format!("http://127.0.0.1:{port}/");
        // Wait until it accepts connections (at most 10 s).
        for _ in 0..100 {
            if std::net::TcpStream::connect(("127.0.0.1", port)).is_ok() {
                return Ok(Self { child, url });
            }
            std::thread::sleep(std::time::Duration::from_millis(100));
        }
        Err(Failure(format!("the server on port {port} did not start")))
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

fn serve_site(ctx: &Ctx) -> StepResult {
    let start = env::var("NOISESONDE_PORT")
        .ok()
        .and_then(|p| p.parse().ok())
        .unwrap_or(8000);
    let port = free_port(start)?;
    let mut server = Server::start(ctx, &ctx.root.join(SITE_DIR), port)?;
    println!(
        "\n    noisesonde is served at {}  (the demo recording is analysed on arrival; Ctrl-C stops)\n",
        server.url
    );
    let status = server
        .child
        .wait()
        .map_err(|err| Failure(format!("the server failed: {err}")))?;
    Err(Failure(format!("the server stopped ({status})")))
}

// ---------------------------------------------------------------- browser tests

/// Folder of the page's end-to-end tests (node's test runner + playwright-core).
const BROWSER_TEST_DIR: &str = "tests/browser";
/// Debian's Chromium (never a browser download).
const CHROMIUM: &str = "/usr/bin/chromium";

/// Installs Debian's chromium when missing (CI runs as root on a clean machine).
fn ensure_chromium(ctx: &Ctx) -> Result<(), Failure> {
    if Path::new(CHROMIUM).exists() {
        return Ok(());
    }
    println!("--- installing Debian's chromium (about a minute, once)");
    ctx.tool("apt-get", &["update", "-qq"]).run()?;
    ctx.tool("apt-get", &["install", "-y", "-qq", "chromium"])
        .env("DEBIAN_FRONTEND", "noninteractive")
        .run()
}

/// `npm ci` in tests/browser when playwright-core or binaryen is not installed there yet.
fn ensure_node_packages(ctx: &Ctx) -> Result<(), Failure> {
    let dir = ctx.root.join(BROWSER_TEST_DIR);
    let installed = ["playwright-core", "binaryen"].iter().all(|package| {
        dir.join("node_modules")
            .join(package)
            .join("package.json")
            .is_file()
    });
    if installed {
        return Ok(());
    }
    ctx.tool(
        "npm",
        &[
            "ci",
            "--no-audit",
            "--no-fund",
            "--prefix",
            BROWSER_TEST_DIR,
        ],
    )
    .run()
}

fn browser_end_to_end(ctx: &Ctx) -> StepResult {
    ensure_chromium(ctx)?;
    ensure_node_packages(ctx)?;
    let cli = build_release_cli(ctx)?;
    let site = build_site(ctx)?;
    let single = dist_single(ctx)?;
    let server = Server::start(ctx, &site, free_port(8700)?)?;
    ctx.tool("node", &["--test", "--test-concurrency=1"])
        .arg(format!("{BROWSER_TEST_DIR}/"))
        .env("SITE_URL", &server.url)
        .env("SINGLE_FILE", &single)
        .env("CHROMIUM", CHROMIUM)
        .env("NOISESONDE_BIN", &cli)
        .run()?;
    drop(server);
    Ok(Outcome::Passed)
}

// ---------------------------------------------------------------- bench

const BENCH_STEPS: &[Step] = &[
    (
        "python packages (tests/requirements.txt)",
        ensure_python_deps,
    ),
    ("benchmark (release example vs numpy/scipy)", bench),
    (
        "page benchmark (wasm in headless Chromium vs the native CLI)",
        bench_page,
    ),
    (
        "live listening benchmark (frames per second, worker load)",
        bench_live,
    ),
];

fn bench(ctx: &Ctx) -> StepResult {
    ctx.cargo(&["build", "--release", "--example", "bench"])
        .run()?;
    let bin = ctx.root.join("target/release/examples/bench");
    // This executable doubles as the small launcher that measures each run (`xtask measure`).
    let launcher = env::current_exe()
        .map_err(|err| Failure(format!("cannot locate the xtask executable: {err}")))?;
    ctx.tool("python3", &["xtask/bench.py", "--bin"])
        .arg(&bin)
        .arg("--launcher")
        .arg(&launcher)
        .run()?;
    Ok(Outcome::Passed)
}

/// Where `xtask/bench_page.mjs` writes its Markdown table.
const BENCH_PAGE_RESULTS: &str = "target/bench-page.md";

/// The page's half of the benchmark: builds the release CLI and the page, serves a copy of the
/// page on 127.0.0.1 (so a concurrent `cargo xtask test` rebuilding target/site cannot pull it
/// away mid-run) and runs `xtask/bench_page.mjs` in headless Chromium against both.
fn bench_page(ctx: &Ctx) -> StepResult {
    ensure_chromium(ctx)?;
    ensure_node_packages(ctx)?;
    let cli = build_release_cli(ctx)?;
    let site = build_site(ctx)?;
    let served = ctx.root.join("target/bench-data/site");
    if served.exists() {
        fs::remove_dir_all(&served)
            .map_err(|err| Failure(format!("cannot clear {}: {err}", served.display())))?;
    }
    copy_tree(&site, &served)?;
    let out = ctx.root.join(BENCH_PAGE_RESULTS);
    let server = Server::start(ctx, &served, free_port(8750)?)?;
    ctx.tool("node", &["xtask/bench_page.mjs"])
        .env("SITE_URL", &server.url)
        .env("SITE_DIR", &served)
        .env("CHROMIUM", CHROMIUM)
        .env("NOISESONDE_BIN", &cli)
        .env("OUT", &out)
        .run()?;
    drop(server);
    println!("--- page benchmark table: {}", out.display());
    Ok(Outcome::Passed)
}

/// Where `xtask/bench_live.mjs` writes its Markdown table.
const BENCH_LIVE_RESULTS: &str = "target/bench-live.md";

/// Live listening under load: the page served on 127.0.0.1 listens to Chromium's fake capture
/// device; `xtask/bench_live.mjs` reads the frame rate and the worker's share of one core.
fn bench_live(ctx: &Ctx) -> StepResult {
    ensure_chromium(ctx)?;
    ensure_node_packages(ctx)?;
    let site = build_site(ctx)?;
    let out = ctx.root.join(BENCH_LIVE_RESULTS);
    let server = Server::start(ctx, &site, free_port(8760)?)?;
    ctx.tool("node", &["xtask/bench_live.mjs"])
        .env("SITE_URL", &server.url)
        .env("CHROMIUM", CHROMIUM)
        .env("OUT", &out)
        .run()?;
    drop(server);
    println!("--- live benchmark table: {}", out.display());
    Ok(Outcome::Passed)
}

// ---------------------------------------------------------------- measure

/// `measure REPORT -- PROGRAM ARGS…`: runs PROGRAM with inherited stdio, reaps it with `wait4`
/// and writes one JSON line to REPORT:
/// `{"exit_code":…,"signal":…,"wall_s":…,"maxrss_kib":…,"launcher_hwm_kib":…}`.
/// Exits with PROGRAM's exit code (1 when it was killed by a signal).
///
/// Why a launcher: Linux folds the resident-set high-water mark of the memory a process had
/// before `exec` into its `ru_maxrss`; a child spawned straight from the benchmark's Python
/// process (numpy loaded) therefore reports at least that process's size. Spawned from this
/// small process instead, a child's `ru_maxrss` is its own peak, or at most this launcher's
/// own high-water mark (`launcher_hwm_kib`, reported as the measurement floor).
fn measure(args: &[String]) -> ExitCode {
    let (report, program, program_args) = match args {
        [report, dashdash, program, rest @ ..] if dashdash == "--" => (report, program, rest),
        _ => {
            eprintln!("xtask measure: usage: measure REPORT -- PROGRAM ARGS...");
            return ExitCode::from(2);
        }
    };
    match measure_run(program, program_args) {
        Ok(reaped) => {
            let launcher_hwm_kib =
                own_high_water_kib().map_or_else(|| "null".to_string(), |kib| kib.to_string());
            let line = format!(
                "{{\"exit_code\":{},\"signal\":{},\"wall_s\":{:.6},\"maxrss_kib\":{},\"launcher_hwm_kib\":{}}}\n",
                reaped.exit_code.map_or("null".into(), |c| c.to_string()),
                reaped.signal.map_or("null".into(), |s| s.to_string()),
                reaped.wall_s,
                reaped.maxrss_kib,
                launcher_hwm_kib,
            );
            if let Err(err) = fs::write(report, line) {
                eprintln!("xtask measure: cannot write {report}: {err}");
                return ExitCode::FAILURE;
            }
            match reaped.exit_code {
                Some(code) => ExitCode::from(u8::try_from(code).unwrap_or(1)),
                None => ExitCode::FAILURE,
            }
        }
        Err(message) => {
            eprintln!("xtask measure: {message}");
            ExitCode::FAILURE
        }
    }
}

/// This process's resident-set high-water mark (`VmHWM` of /proc/self/status), in KiB.
fn own_high_water_kib() -> Option<u64> {
    let status = fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|line| line.starts_with("VmHWM:"))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

struct Reaped {
    exit_code: Option<i32>,
    signal: Option<i32>,
    wall_s: f64,
    maxrss_kib: i64,
}

#[cfg(all(target_os = "linux", target_pointer_width = "64"))]
fn measure_run(program: &str, args: &[String]) -> Result<Reaped, String> {
    use std::os::raw::{c_int, c_long};
    use std::os::unix::process::ExitStatusExt;
    use std::time::Instant;

    /// `struct rusage` of Linux on 64-bit targets: two `struct timeval` (two longs each),
    /// then fourteen longs, the first of which is `ru_maxrss` in KiB (getrusage(2)).
    #[repr(C)]
    #[derive(Default)]
    struct Rusage {
        utime: [c_long; 2],
        stime: [c_long; 2],
        maxrss: c_long,
        rest: [c_long; 13],
    }
    extern "C" {
        fn wait4(pid: c_int, status: *mut c_int, options: c_int, rusage: *mut Rusage) -> c_int;
    }

    let started = Instant::now();
    let child = Command::new(program)
        .args(args)
        .spawn()
        .map_err(|err| format!("cannot start {program}: {err}"))?;
    let pid = c_int::try_from(child.id()).map_err(|_| "process id out of range".to_string())?;
    let mut status: c_int = 0;
    let mut usage = Rusage::default();
    loop {
        // SAFETY: `status` and `usage` are valid, exclusively borrowed and laid out as the
        // kernel's `int` and `struct rusage`; `pid` is our own unreaped child.
        let reaped = unsafe { wait4(pid, &mut status, 0, &mut usage) };
        if reaped == pid {
            break;
        }
        let err = std::io::Error::last_os_error();
        if err.kind() != std::io::ErrorKind::Interrupted {
            return Err(format!("wait4 failed: {err}"));
        }
    }
    let wall_s = started.elapsed().as_secs_f64();
    // The child is reaped; std's handle must not wait for it again (dropping it does not).
    drop(child);
    let exit = std::process::ExitStatus::from_raw(status);
    Ok(Reaped {
        exit_code: exit.code(),
        signal: exit.signal(),
        wall_s,
        maxrss_kib: usage.maxrss, // c_long is i64 on 64-bit Linux
    })
}

#[cfg(not(all(target_os = "linux", target_pointer_width = "64")))]
fn measure_run(_program: &str, _args: &[String]) -> Result<Reaped, String> {
    Err("measuring peak memory is implemented for 64-bit Linux only".into())
}
