//! Command-line front end: `noisesonde analyze FILE [options]` for one record,
//! `noisesonde ensemble FILE FILE... [options]` for ergodicity across several.
//!
//! Exit status: 0 on success, 2 for bad input or settings (the message names the problem),
//! 1 when an output file cannot be written.

use std::fs::File;
use std::io::{BufReader, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{Args, Parser, Subcommand};

use noisesonde::acf::AcfEstimator;
use noisesonde::analysis::{analyze, Settings, DEFAULT_CONFIDENCE_LEVEL};
use noisesonde::ensemble_analysis::{analyze_ensemble, EnsembleReport, EnsembleSettings};
use noisesonde::io::{self, ColumnSelector, InputOptions, RawFormat, SampleSource};
use noisesonde::spectral::welch::{DEFAULT_OVERLAP_FRAC, DEFAULT_SEGMENT_LEN};
use noisesonde::spectral::{Average, Detrend, WelchSettings};
use noisesonde::stationarity::{
    LevelLine, StationarityReport, StationaritySettings, DEFAULT_ALPHA, DEFAULT_MAX_LAG_LEN,
    DEFAULT_SEGMENTS, DEFAULT_STRETCHES,
};
use noisesonde::units::Calibration;
use noisesonde::window::WindowKind;
use noisesonde::{AnalysisError, Report, SettingsError};

/// Noise measurement from a recording: calibrated PSD, autocorrelation and lab quantities.
#[derive(Parser)]
#[command(name = "noisesonde", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Analyse one channel of a WAV/FLAC, CSV/TSV or raw file.
    Analyze(AnalyzeArgs),
    /// Compare several records of one process: are time averages ergodic?
    Ensemble(EnsembleArgs),
}

/// How to read a recording (shared by every subcommand).
#[derive(Args)]
struct InputArgs {
    /// Channel to analyse, 0-based (for text: the n-th data column).
    #[arg(long, value_name = "K")]
    channel: Option<usize>,
    /// Sample rate in Hz (required for raw input and for text without a time column).
    #[arg(long, value_name = "HZ")]
    sample_rate: Option<f64>,
    /// Read the file as raw samples: i16le i16be i32le i32be f32le f32be f64le f64be.
    #[arg(long, value_name = "FORMAT")]
    raw: Option<RawFormat>,
    /// Interleaved channels of raw input.
    #[arg(long, value_name = "N")]
    channels: Option<usize>,
    /// Data column of a CSV, by header name or 0-based index.
    #[arg(long, value_name = "NAME|INDEX")]
    column: Option<ColumnSelector>,
    /// Time column of a CSV, by header name or 0-based index (default: a column named like time).
    #[arg(long, value_name = "NAME|INDEX")]
    time_column: Option<ColumnSelector>,
}

impl InputArgs {
    fn options(&self) -> InputOptions {
        InputOptions {
            channel: self.channel,
            column: self.column.clone(),
            time_column: self.time_column.clone(),
            sample_rate_hz: self.sample_rate,
            raw: self.raw,
            channels: self.channels,
        }
    }
}

/// Full scale → physical units.
#[derive(Args)]
struct CalibrationArgs {
    /// Physical value of digital full scale (for text input: of one input unit).
    #[arg(long, value_name = "UNITS_PER_FS", default_value_t = 1.0)]
    scale: f64,
    /// Name of the physical unit, e.g. V, Pa, g.
    #[arg(long)]
    unit: Option<String>,
}

impl CalibrationArgs {
    fn calibration(&self) -> Calibration {
        Calibration {
            scale_units_per_fs: self.scale,
            unit: self.unit.clone(),
        }
    }
}

/// The stationarity tests.
#[derive(Args)]
struct StationarityArgs {
    /// Significance of each stationarity (and ergodicity) test.
    #[arg(long, value_name = "ALPHA", default_value_t = DEFAULT_ALPHA)]
    alpha: f64,
    /// Cut the record into M to 2M-1 equal segments for the stationarity tests.
    #[arg(long, value_name = "M", default_value_t = DEFAULT_SEGMENTS)]
    stationarity_segments: usize,
    /// Largest lag (samples) of the check that the autocorrelation depends on lag alone.
    #[arg(long, value_name = "K", default_value_t = DEFAULT_MAX_LAG_LEN)]
    stationarity_lags: usize,
    /// Stretches of the record whose autocorrelations are compared.
    #[arg(long, value_name = "J", default_value_t = DEFAULT_STRETCHES)]
    stationarity_stretches: usize,
}

impl StationarityArgs {
    fn settings(&self) -> StationaritySettings {
        StationaritySettings {
            segments: self.stationarity_segments,
            alpha: self.alpha,
            max_lag_len: self.stationarity_lags,
            stretches: self.stationarity_stretches,
        }
    }
}

#[derive(Args)]
struct AnalyzeArgs {
    /// The recording.
    file: PathBuf,
    #[command(flatten)]
    input: InputArgs,
    /// Window: hann, hamming, blackman-harris, flat-top, rectangular or kaiser:BETA.
    #[arg(long, default_value_t = WindowKind::Hann)]
    window: WindowKind,
    /// Segment length in samples (sets the bin width: sample rate / segment).
    #[arg(long, value_name = "N", default_value_t = DEFAULT_SEGMENT_LEN)]
    segment: usize,
    /// Overlap of consecutive segments as a fraction, 0 to <1.
    #[arg(long, value_name = "FRACTION", default_value_t = DEFAULT_OVERLAP_FRAC)]
    overlap: f64,
    /// Per-segment detrend: none, mean or linear.
    #[arg(long, default_value_t = Detrend::Mean)]
    detrend: Detrend,
    /// Averaging of the segments: mean or median (bias-corrected).
    #[arg(long, default_value_t = Average::Mean)]
    average: Average,
    /// Largest autocorrelation lag in seconds (default: one PSD segment).
    #[arg(long, value_name = "S")]
    max_lag_s: Option<f64>,
    /// Autocorrelation normalisation: biased (1/N) or unbiased (1/(N-k)).
    #[arg(long, default_value_t = AcfEstimator::Biased)]
    acf: AcfEstimator,
    /// Confidence level of the PSD interval.
    #[arg(long, value_name = "LEVEL", default_value_t = DEFAULT_CONFIDENCE_LEVEL)]
    confidence: f64,
    #[command(flatten)]
    calibration: CalibrationArgs,
    #[command(flatten)]
    stationarity: StationarityArgs,
    /// Write the full report as JSON to PATH ('-' for standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Write psd.csv and acf.csv into DIR.
    #[arg(long, value_name = "DIR")]
    csv: Option<PathBuf>,
    /// Print no summary.
    #[arg(long, short)]
    quiet: bool,
}

#[derive(Args)]
struct EnsembleArgs {
    /// The records: two or more recordings of the same process, sampled alike.
    #[arg(required = true)]
    files: Vec<PathBuf>,
    #[command(flatten)]
    input: InputArgs,
    #[command(flatten)]
    calibration: CalibrationArgs,
    #[command(flatten)]
    stationarity: StationarityArgs,
    /// Lags (samples, comma-separated, each up to --stationarity-lags) at which the records'
    /// autocorrelations are compared (default: 1, 2, 4, ... up to --stationarity-lags).
    #[arg(long, value_name = "N,N,...", value_delimiter = ',')]
    lags: Option<Vec<usize>>,
    /// Write the ensemble report as JSON to PATH ('-' for standard output).
    #[arg(long, value_name = "PATH")]
    json: Option<PathBuf>,
    /// Print no summary.
    #[arg(long, short)]
    quiet: bool,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match cli.command {
        Command::Analyze(args) => run_analyze(&args),
        Command::Ensemble(args) => run_ensemble(&args),
    }
}

/// The file's name for messages and reports.
fn display_name(path: &Path) -> String {
    path.file_name().map_or_else(
        || path.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    )
}

/// Opens `path` as a sample source, or the message to print.
fn open_source(
    path: &Path,
    options: &InputOptions,
) -> Result<Box<dyn SampleSource + Send>, String> {
    let file = File::open(path).map_err(|e| format!("{}: cannot open: {e}", path.display()))?;
    io::open(
        BufReader::with_capacity(1 << 20, file),
        &display_name(path),
        options,
    )
    .map_err(|e| e.to_string())
}

fn run_analyze(args: &AnalyzeArgs) -> ExitCode {
    let options = args.input.options();
    let settings = Settings {
        welch: WelchSettings {
            window: args.window,
            segment_len: args.segment,
            overlap_frac: args.overlap,
            detrend: args.detrend,
            average: args.average,
        },
        max_lag_s: args.max_lag_s,
        acf_estimator: args.acf,
        calibration: args.calibration.calibration(),
        confidence_level: args.confidence,
        stationarity: args.stationarity.settings(),
    };
    let report = match open_source(&args.file, &options)
        .and_then(|mut source| analyze(source.as_mut(), &settings).map_err(|e| e.to_string()))
    {
        Ok(report) => report,
        Err(e) => {
            eprintln!("error: {e}");
            return ExitCode::from(2);
        }
    };
    if let Some(path) = &args.json {
        if let Err(e) = write_json(&report, path) {
            eprintln!("error: cannot write {}: {e}", path.display());
            return ExitCode::from(1);
        }
    }
    if let Some(dir) = &args.csv {
        if let Err(e) = write_csv(&report, dir) {
            eprintln!("error: cannot write CSV into {}: {e}", dir.display());
            return ExitCode::from(1);
        }
    }
    let to_stdout = args.json.as_deref() == Some(Path::new("-"));
    if !args.quiet {
        let summary = summary(&report);
        // Keep standard output clean for JSON piped to another program.
        if to_stdout {
            eprint!("{summary}");
        } else {
            print!("{summary}");
        }
    }
    for w in &report.warnings {
        eprintln!("warning: {w}");
    }
    ExitCode::SUCCESS
}

fn run_ensemble(args: &EnsembleArgs) -> ExitCode {
    if args.files.len() < 2 {
        eprintln!(
            "error: ergodicity cannot be tested from one record: give two or more recordings of the same process (noisesonde ensemble FILE FILE ...); `noisesonde analyze` tests one record's stationarity"
        );
        return ExitCode::from(2);
    }
    let options = args.input.options();
    let mut sources = Vec::with_capacity(args.files.len());
    for path in &args.files {
        match open_source(path, &options) {
            Ok(source) => sources.push(source),
            Err(e) => {
                eprintln!("error: {e}");
                return ExitCode::from(2);
            }
        }
    }
    let settings = EnsembleSettings {
        calibration: args.calibration.calibration(),
        stationarity: args.stationarity.settings(),
        lags_len: args.lags.clone(),
    };
    let mut refs: Vec<&mut dyn SampleSource> = sources
        .iter_mut()
        .map(|s| s.as_mut() as &mut dyn SampleSource)
        .collect();
    let report = match analyze_ensemble(&mut refs, &settings) {
        Ok(report) => report,
        Err(e) => {
            // Errors about one record name it by its 0-based index: give the file too.
            let record = match &e {
                noisesonde::Error::Analysis(AnalysisError::NonFiniteSampleIn {
                    record, ..
                })
                | noisesonde::Error::Settings(SettingsError::SampleRateMismatch {
                    record, ..
                }) => args.files.get(*record),
                _ => None,
            };
            match record {
                Some(path) => eprintln!("error: {}: {e}", path.display()),
                None => eprintln!("error: {e}"),
            }
            return ExitCode::from(2);
        }
    };
    if let Some(path) = &args.json {
        if let Err(e) = write_json(&report, path) {
            eprintln!("error: cannot write {}: {e}", path.display());
            return ExitCode::from(1);
        }
    }
    if !args.quiet {
        let summary = ensemble_summary(&report);
        if args.json.as_deref() == Some(Path::new("-")) {
            eprint!("{summary}");
        } else {
            print!("{summary}");
        }
    }
    for w in &report.warnings {
        eprintln!("warning: {w}");
    }
    ExitCode::SUCCESS
}

fn write_json<T: serde::Serialize>(report: &T, path: &Path) -> std::io::Result<()> {
    if path == Path::new("-") {
        let stdout = std::io::stdout();
        let mut out = BufWriter::new(stdout.lock());
        serde_json::to_writer_pretty(&mut out, report)?;
        writeln!(out)?;
        return out.flush();
    }
    let mut out = BufWriter::new(File::create(path)?);
    serde_json::to_writer_pretty(&mut out, report)?;
    writeln!(out)?;
    out.flush()
}

/// Writes `psd.csv` and `acf.csv` (see `noisesonde::export`).
fn write_csv(report: &Report, dir: &Path) -> std::io::Result<()> {
    std::fs::create_dir_all(dir)?;
    std::fs::write(dir.join("psd.csv"), noisesonde::export::psd_csv(report))?;
    std::fs::write(dir.join("acf.csv"), noisesonde::export::acf_csv(report))
}

/// A short human summary: each figure with its unit and its meaning.
fn summary(r: &Report) -> String {
    use std::fmt::Write as _;
    let u = &r.units;
    let m = &r.moments;
    let p = &r.psd;
    let mut s = String::new();
    let src = &r.source;
    let _ = writeln!(
        s,
        "{}: {}, channel {} of {}, {} Hz",
        src.name, src.format, r.channel, src.channels, r.sample_rate_hz
    );
    let per = if src.full_scale {
        "digital full scale"
    } else {
        "input unit"
    };
    let _ = writeln!(
        s,
        "  {} samples, {:.6} s; unit {} ({} {} per {per})",
        r.samples, r.duration_s, r.unit, r.calibration.scale_units_per_fs, r.unit
    );
    let _ = writeln!(s, "Lab quantities");
    let row = |s: &mut String, label: &str, value: f64, unit: &str| {
        let _ = writeln!(s, "  {label:<34} {value:>14.6e} {unit}");
    };
    row(&mut s, "mean (DC level)", m.mean, &u.amplitude);
    row(
        &mut s,
        "RMS (total, sqrt of mean square)",
        m.rms,
        &u.amplitude,
    );
    row(
        &mut s,
        "standard deviation (AC RMS)",
        m.std_dev,
        &u.amplitude,
    );
    row(
        &mut s,
        "mean square (total power, R(0))",
        m.mean_square,
        &u.power,
    );
    row(&mut s, "variance (AC power, C(0))", m.variance, &u.power);
    row(
        &mut s,
        "square of the mean (DC power)",
        m.dc_power,
        &u.power,
    );
    row(&mut s, "minimum", m.min, &u.amplitude);
    row(&mut s, "maximum", m.max, &u.amplitude);
    if let Some(cf) = m.crest_factor {
        let _ = writeln!(
            s,
            "  {:<34} {:>14.4} ({:.2} dB)",
            "crest factor (peak / RMS)",
            cf,
            20.0 * cf.log10()
        );
    }
    match m.clipped_samples {
        Some(c) => {
            let _ = writeln!(s, "  {:<34} {:>14}", "samples at or beyond full scale", c);
        }
        None => {
            let _ = writeln!(
                s,
                "  {:<34} {:>14}",
                "samples at or beyond full scale", "n/a (text)"
            );
        }
    }
    let _ = writeln!(
        s,
        "PSD (Welch): {} window, {}-sample segments, {} overlap, {} detrend, {} average",
        p.window, p.segment_len, p.overlap_len, p.detrend, p.average
    );
    let _ = writeln!(
        s,
        "  bin width {:.6} Hz; ENBW {:.4} bins = RBW {:.6} Hz; {} segments, {:.1} degrees of freedom",
        p.bin_width_hz, p.enbw_bins, p.enbw_hz, p.segments, p.dof
    );
    let _ = writeln!(
        s,
        "  {:.0} % confidence interval: ×{:.4} to ×{:.4} of each density value",
        p.confidence_level * 100.0,
        p.ci_factor_lower,
        p.ci_factor_upper
    );
    if let Some(median) = median_density(&p.density) {
        let _ = writeln!(
            s,
            "  median density over all bins {:.6e} {} = {:.6e} {} ({:.2} dB re 1 {})",
            median,
            u.density,
            median.sqrt(),
            u.amplitude_density,
            noisesonde::units::power_db(median, 1.0),
            u.density
        );
    }
    let a = &r.acf;
    let _ = write!(
        s,
        "Autocorrelation ({}), lags to {:.6} s",
        a.estimator, a.max_lag_s
    );
    match (a.one_over_e_s, a.zero_crossing_s) {
        (Some(e), Some(z)) => {
            let _ = writeln!(s, "; coefficient 1/e at {e:.6e} s, first zero at {z:.6e} s");
        }
        (Some(e), None) => {
            let _ = writeln!(s, "; coefficient 1/e at {e:.6e} s, no zero crossing");
        }
        _ => {
            let _ = writeln!(s, "; coefficient stays above 1/e");
        }
    }
    let c = &r.checks;
    let _ = writeln!(
        s,
        "Checks: Parseval ∫PSD df / {} = {:.6}; Wiener–Khinchin max deviation {:.3} % of R(0) over {} lags",
        c.parseval.compared_with,
        c.parseval.ratio,
        c.wiener_khinchin.max_deviation * 100.0,
        c.wiener_khinchin.lags_compared
    );
    match &r.stationarity {
        Some(st) => stationarity_summary(&mut s, st),
        None => {
            let _ = writeln!(
                s,
                "Stationarity: not tested (the record is too short; see the warning)"
            );
        }
    }
    s
}

/// The stationarity verdict: a line per quantity with its tests, and what to try on failure.
fn stationarity_summary(s: &mut String, st: &StationarityReport) {
    use std::fmt::Write as _;
    let _ = writeln!(s, "Stationarity: {}", st.verdict);
    let seg = &st.segments;
    let _ = writeln!(
        s,
        "  {} segments of {} samples ({:.6} s); {} samples after the last not tested",
        seg.count, seg.segment_len, seg.segment_s, seg.unused_samples
    );
    for (label, line) in [("mean", &st.mean), ("mean square", &st.mean_square)] {
        level_line(s, label, line);
    }
    let a = &st.autocorrelation;
    let c = &a.comparison;
    let _ = writeln!(
        s,
        "  {:<16} {:<14} {} stretches, lags to {} samples: largest deviation {:.2} standard errors (threshold {:.2})",
        "autocorrelation",
        verdict_word(a.stationary),
        c.stretches,
        c.lag_s.len().saturating_sub(1),
        c.largest_deviation,
        c.threshold
    );
    if !a.stationary {
        let _ = writeln!(s, "    found: {}", a.finding);
        let _ = writeln!(s, "    try: {}", a.advice);
    }
    let _ = writeln!(s, "  {}", st.ergodicity);
}

fn verdict_word(stationary: bool) -> &'static str {
    if stationary {
        "stationary"
    } else {
        "NOT stationary"
    }
}

fn level_line(s: &mut String, label: &str, line: &LevelLine) {
    use std::fmt::Write as _;
    let ra = &line.reverse_arrangements;
    let runs = &line.runs;
    let bound = |b: Option<u64>| b.map_or("-".to_string(), |v| v.to_string());
    let _ = writeln!(
        s,
        "  {label:<16} {:<14} reverse arrangements A = {} ({} < A <= {}: {}), runs r = {} ({} < r <= {}: {})",
        verdict_word(line.stationary),
        ra.statistic,
        bound(ra.lower),
        ra.upper,
        if ra.accepted { "accept" } else { "reject" },
        runs.statistic,
        bound(runs.lower),
        runs.upper,
        if runs.accepted { "accept" } else { "reject" }
    );
    if !line.stationary {
        let _ = writeln!(s, "    found: {}", line.finding);
        let _ = writeln!(s, "    try: {}", line.advice);
    }
}

/// A short human summary of an ensemble report.
fn ensemble_summary(r: &EnsembleReport) -> String {
    use std::fmt::Write as _;
    let mut s = String::new();
    let e = &r.ensemble;
    let _ = writeln!(
        s,
        "Ensemble of {} records, {} aligned samples each ({:.6} s at {} Hz), unit {}",
        r.records, r.samples, r.duration_s, r.sample_rate_hz, r.unit
    );
    let _ = writeln!(s, "Ergodicity: {}", e.verdict);
    let row = |s: &mut String,
               label: &str,
               line: &noisesonde::stationarity::ensemble::ErgodicityLine,
               unit: &str| {
        let _ = writeln!(
            s,
            "  {label:<22} {:<11} ensemble average {:.6e} {unit}; F = {:.3} (critical {:.3}, p = {:.3e})",
            if line.ergodic { "ergodic" } else { "NOT ergodic" },
            line.ensemble_average,
            line.anova.f_statistic,
            line.anova.f_critical,
            line.anova.p_value
        );
    };
    row(&mut s, "mean", &e.mean, &r.units.amplitude);
    row(&mut s, "mean square", &e.mean_square, &r.units.power);
    for lag in &e.autocorrelation {
        row(
            &mut s,
            &format!("R at lag {}", lag.lag_len),
            &lag.line,
            &r.units.power,
        );
    }
    let _ = writeln!(
        s,
        "  variance across records {:.6e} {} vs within records {:.6e} {}",
        e.variance_across_records, r.units.power, e.variance_within_records, r.units.power
    );
    let _ = writeln!(s, "Each record:");
    for (source, st) in r.sources.iter().zip(&r.each_record) {
        let _ = writeln!(s, "  {}: {}", source.name, st.verdict);
    }
    s
}

fn median_density(density: &[f64]) -> Option<f64> {
    let mut v: Vec<f64> = density.iter().skip(1).copied().collect();
    if v.is_empty() {
        return None;
    }
    let mid = v.len() / 2;
    let (_, m, _) = v.select_nth_unstable_by(mid, f64::total_cmp);
    Some(*m)
}
