//! Command-line front end: `noisesonde analyze FILE [options]`.
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
use noisesonde::io::{self, ColumnSelector, InputOptions, RawFormat};
use noisesonde::spectral::welch::{DEFAULT_OVERLAP_FRAC, DEFAULT_SEGMENT_LEN};
use noisesonde::spectral::{Average, Detrend, WelchSettings};
use noisesonde::units::Calibration;
use noisesonde::window::WindowKind;
use noisesonde::Report;

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
}

#[derive(Args)]
struct AnalyzeArgs {
    /// The recording.
    file: PathBuf,
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
    /// Physical value of digital full scale (for text input: of one input unit).
    #[arg(long, value_name = "UNITS_PER_FS", default_value_t = 1.0)]
    scale: f64,
    /// Name of the physical unit, e.g. V, Pa, g.
    #[arg(long)]
    unit: Option<String>,
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

fn main() -> ExitCode {
    let cli = Cli::parse();
    match cli.command {
        Command::Analyze(args) => run_analyze(&args),
    }
}

fn run_analyze(args: &AnalyzeArgs) -> ExitCode {
    let name = args.file.file_name().map_or_else(
        || args.file.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    );
    let file = match File::open(&args.file) {
        Ok(f) => f,
        Err(e) => {
            eprintln!("error: {}: cannot open: {e}", args.file.display());
            return ExitCode::from(2);
        }
    };
    let options = InputOptions {
        channel: args.channel,
        column: args.column.clone(),
        time_column: args.time_column.clone(),
        sample_rate_hz: args.sample_rate,
        raw: args.raw,
        channels: args.channels,
    };
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
        calibration: Calibration {
            scale_units_per_fs: args.scale,
            unit: args.unit.clone(),
        },
        confidence_level: args.confidence,
    };
    let report = match io::open(BufReader::with_capacity(1 << 20, file), &name, &options)
        .map_err(noisesonde::Error::from)
        .and_then(|mut source| analyze(source.as_mut(), &settings))
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

fn write_json(report: &Report, path: &Path) -> std::io::Result<()> {
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
