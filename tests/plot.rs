//! The plots, drawn natively into a backend that records what it is asked to draw, so the tests
//! can check the very chart the page shows: where the curve lies, what the labels say, what the
//! markers mark. One test also draws real SVG.

mod common;

use common::VecSource;

use std::cell::RefCell;
use std::convert::Infallible;
use std::rc::Rc;

use noisesonde::analysis::{analyze, Settings};
use noisesonde::plot::{
    colour_range_db, colours, decimate_min_max, decimate_min_max_indices, draw_acf, draw_psd,
    draw_segment_statistics, draw_spectrogram, draw_stretch_acf, nearest_bin, sequential_colour,
    AcfMode, AcfPlotOptions, PlotError, PlotFrame, PsdMode, PsdPlotOptions, PsdTrace,
    SegmentPlotOptions, SpectrogramPlotOptions, StretchPlotOptions, TraceKind, POOLED,
    SEGMENT_POINTS, SEQUENTIAL_STOPS, STRETCH_COLOURS, WHOLE_RECORD,
};
use noisesonde::report::Report;
use noisesonde::spectral::WelchSettings;
use noisesonde::units::Calibration;
use plotters::prelude::{DrawingBackend, IntoDrawingArea, RGBColor};
use plotters_backend::{
    BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingErrorKind, FontTransform,
};

// ---------------------------------------------------------------------------------------------
// A backend that records.

#[derive(Debug, Clone)]
struct TextRecord {
    text: String,
    pos: BackendCoord,
    size_px: f64,
    rotated: bool,
}

#[derive(Debug, Clone)]
struct Shape {
    points: Vec<BackendCoord>,
    rgb: (u8, u8, u8),
    alpha: f64,
    width_px: u32,
}

#[derive(Debug, Default)]
struct Record {
    texts: Vec<TextRecord>,
    paths: Vec<Shape>,
    polygons: Vec<Shape>,
    filled_rects: Vec<Shape>,
}

impl Record {
    fn paths_of(&self, c: RGBColor) -> Vec<&Shape> {
        self.paths.iter().filter(|p| p.rgb == rgb(c)).collect()
    }

    /// The measured curve: the longest path in the curve colour.
    fn curve(&self) -> Shape {
        self.paths_of(colours::CURVE)
            .into_iter()
            .max_by_key(|p| p.points.len())
            .cloned()
            .expect("a curve was drawn")
    }

    /// The y-axis description: the one text drawn rotated.
    fn y_description(&self) -> String {
        let rotated: Vec<&TextRecord> = self.texts.iter().filter(|t| t.rotated).collect();
        assert_eq!(rotated.len(), 1, "{rotated:?}");
        rotated[0].text.clone()
    }

    fn has_text(&self, part: &str) -> bool {
        self.texts.iter().any(|t| t.text.contains(part))
    }
}

fn rgb(c: RGBColor) -> (u8, u8, u8) {
    (c.0, c.1, c.2)
}

/// Records every path, polygon, filled rectangle and text; measures text as 0.6 em per
/// character and 1 em high.
struct Recorder {
    size: (u32, u32),
    record: Rc<RefCell<Record>>,
}

impl Recorder {
    fn new(width_px: u32, height_px: u32) -> (Self, Rc<RefCell<Record>>) {
        let record = Rc::new(RefCell::new(Record::default()));
        (
            Self {
                size: (width_px, height_px),
                record: record.clone(),
            },
            record,
        )
    }
}

fn shape<S: BackendStyle>(points: Vec<BackendCoord>, style: &S) -> Shape {
    let BackendColor { rgb, alpha } = style.color();
    Shape {
        points,
        rgb,
        alpha,
        width_px: style.stroke_width(),
    }
}

impl DrawingBackend for Recorder {
    type ErrorType = Infallible;

    fn get_size(&self) -> (u32, u32) {
        self.size
    }
    fn ensure_prepared(&mut self) -> Result<(), DrawingErrorKind<Infallible>> {
        Ok(())
    }
    fn present(&mut self) -> Result<(), DrawingErrorKind<Infallible>> {
        Ok(())
    }
    fn draw_pixel(
        &mut self,
        _: BackendCoord,
        _: BackendColor,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        Ok(())
    }
    fn draw_line<S: BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.record
            .borrow_mut()
            .paths
            .push(shape(vec![from, to], style));
        Ok(())
    }
    fn draw_rect<S: BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        if fill {
            self.record
                .borrow_mut()
                .filled_rects
                .push(shape(vec![upper_left, bottom_right], style));
        }
        Ok(())
    }
    fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        let points = path.into_iter().collect();
        self.record.borrow_mut().paths.push(shape(points, style));
        Ok(())
    }
    fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        vert: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        let points = vert.into_iter().collect();
        self.record.borrow_mut().polygons.push(shape(points, style));
        Ok(())
    }
    fn draw_text<T: BackendTextStyle>(
        &mut self,
        text: &str,
        style: &T,
        pos: BackendCoord,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.record.borrow_mut().texts.push(TextRecord {
            text: text.to_string(),
            pos,
            size_px: style.size(),
            rotated: !matches!(style.transform(), FontTransform::None),
        });
        Ok(())
    }
    fn estimate_text_size<T: BackendTextStyle>(
        &self,
        text: &str,
        style: &T,
    ) -> Result<(u32, u32), DrawingErrorKind<Infallible>> {
        let em = style.size();
        Ok(((0.6 * em * text.chars().count() as f64) as u32, em as u32))
    }
}

// ---------------------------------------------------------------------------------------------
// Reports to draw.

/// Uniform noise on (−0.5, 0.5) from xorshift64* (Vigna 2016), deterministic.
fn noise(len: usize, seed: u64) -> Vec<f64> {
    let mut state = seed.max(1);
    (0..len)
        .map(|_| {
            state ^= state >> 12;
            state ^= state << 25;
            state ^= state >> 27;
            let bits = state.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11;
            bits as f64 / (1u64 << 53) as f64 - 0.5
        })
        .collect()
}

const FS_HZ: f64 = 1000.0;
const SEGMENT_LEN: usize = 256;

fn settings(unit: Option<&str>) -> Settings {
    Settings {
        welch: WelchSettings {
            segment_len: SEGMENT_LEN,
            ..WelchSettings::default()
        },
        calibration: Calibration {
            scale_units_per_fs: 1.0,
            unit: unit.map(str::to_string),
        },
        ..Settings::default()
    }
}

/// The report of 16 segments of white noise at 1 kHz, in volts.
fn noise_report() -> Report {
    let mut source = VecSource::new(noise(16 * SEGMENT_LEN, 7), FS_HZ);
    analyze(&mut source, &settings(Some("V"))).expect("analysis of white noise")
}

/// Draws the PSD into a recorder of `width_px` × `height_px`.
fn psd_plot(
    report: &Report,
    options: &PsdPlotOptions,
    size: (u32, u32),
) -> (Result<PlotFrame, PlotError>, Record) {
    let (backend, record) = Recorder::new(size.0, size.1);
    let area = backend.into_drawing_area();
    let result = draw_psd(&area, report, options);
    drop(area);
    let record = Rc::try_unwrap(record).expect("one owner").into_inner();
    (result, record)
}

fn acf_plot(report: &Report, options: &AcfPlotOptions) -> (Result<PlotFrame, PlotError>, Record) {
    let (backend, record) = Recorder::new(800, 500);
    let area = backend.into_drawing_area();
    let result = draw_acf(&area, report, options);
    drop(area);
    let record = Rc::try_unwrap(record).expect("one owner").into_inner();
    (result, record)
}

fn psd_options(mode: PsdMode) -> PsdPlotOptions {
    PsdPlotOptions {
        mode,
        ..PsdPlotOptions::default()
    }
}

/// Relative agreement of round trips through the frame (a few ulps of log10 and 10^x).
const ROUND_TRIP_REL: f64 = 1e-12;

// ---------------------------------------------------------------------------------------------
// PSD.

#[test]
fn frame_maps_first_and_last_frequency_to_the_edges() {
    let report = noise_report();
    let (frame, record) = psd_plot(&report, &PsdPlotOptions::default(), (800, 500));
    let frame = frame.expect("PSD drawn");

    let first_hz = FS_HZ / SEGMENT_LEN as f64; // bin 1; bin 0 (DC) cannot sit on a log axis
    let last_hz = FS_HZ / 2.0;
    assert_eq!(report.psd.frequency_hz[1], first_hz);
    assert_eq!(*report.psd.frequency_hz.last().unwrap(), last_hz);
    assert!(frame.x_log && frame.y_log);
    assert_eq!((frame.x_min, frame.x_max), (first_hz, last_hz));
    assert!((frame.px_at(first_hz) - frame.left_px).abs() < 1e-9);
    assert!((frame.px_at(last_hz) - (frame.left_px + frame.width_px)).abs() < 1e-9);
    for f in [first_hz, 10.0, 123.4, 250.0, last_hz] {
        let back = frame.x_at(frame.px_at(f));
        assert!((back - f).abs() <= ROUND_TRIP_REL * f, "{f} -> {back}");
    }
    for px in [
        frame.left_px,
        frame.left_px + 17.5,
        frame.left_px + frame.width_px,
    ] {
        assert!((frame.px_at(frame.x_at(px)) - px).abs() < 1e-9);
    }

    // The curve was drawn where the frame says: first point on the left edge, last point on the
    // right edge, every point inside the plotting area.
    let curve = record.curve();
    let (first, last) = (curve.points[0], *curve.points.last().unwrap());
    assert_eq!(first.0, frame.left_px as i32);
    assert_eq!(last.0, (frame.left_px + frame.width_px) as i32);
    for &(x, y) in &curve.points {
        assert!(frame.contains_px(f64::from(x)) && frame.contains_py(f64::from(y)));
    }
    // 128 bins above DC in about 700 pixel columns: nothing to decimate.
    assert_eq!(curve.points.len(), report.psd.frequency_hz.len() - 1);
    // And each point sits at its bin's value (plotters floors to whole pixels).
    for (k, &(x, y)) in curve.points.iter().enumerate() {
        let bin = k + 1;
        let want_x = frame.px_at(report.psd.frequency_hz[bin]);
        let want_y = frame.py_at(report.psd.density[bin]);
        assert!(
            (f64::from(x) - want_x).abs() <= 1.0,
            "bin {bin}: x {x} vs {want_x}"
        );
        assert!(
            (f64::from(y) - want_y).abs() <= 1.0,
            "bin {bin}: y {y} vs {want_y}"
        );
    }
}

/// A PSD of 100 001 bins (0 to 100 kHz in 1 Hz steps) at 1e-6 V²/Hz with one bin 60 dB
/// higher, built by hand on top of a real report.
fn spur_report(spur_bin: usize) -> Report {
    let mut report = noise_report();
    let bins = 100_001;
    let floor = 1e-6;
    let psd = &mut report.psd;
    report.sample_rate_hz = 200_000.0;
    psd.bin_width_hz = 1.0;
    psd.enbw_hz = 1.5;
    psd.frequency_hz = (0..bins).map(|k| k as f64).collect();
    psd.density = vec![floor; bins];
    psd.density[spur_bin] = floor * 1e6; // +60 dB
    psd.power_spectrum = psd.density.iter().map(|p| p * psd.enbw_hz).collect();
    psd.ci_lower = psd.density.iter().map(|p| p * 0.5).collect();
    psd.ci_upper = psd.density.iter().map(|p| p * 2.0).collect();
    report
}

#[test]
fn a_one_bin_spur_in_100000_bins_survives_decimation() {
    let spur_bin = 12_345;
    let report = spur_report(spur_bin);
    let (frame, record) = psd_plot(&report, &PsdPlotOptions::default(), (800, 500));
    let frame = frame.expect("PSD drawn");
    let curve = record.curve();

    // At most four points per pixel column were drawn, far fewer than 100 000 bins.
    let columns = frame.width_px as usize + 1;
    assert!(
        curve.points.len() <= 4 * columns,
        "{} points for {columns} columns",
        curve.points.len()
    );
    // The spur is there at its full height (1 V²/Hz), in its own column.
    let top = curve.points.iter().min_by_key(|p| p.1).unwrap();
    assert!(
        (f64::from(top.1) - frame.py_at(1.0)).abs() <= 1.0,
        "highest point at y {} but 1 V^2/Hz is at {}",
        top.1,
        frame.py_at(1.0)
    );
    assert!((f64::from(top.0) - frame.px_at(spur_bin as f64)).abs() <= 1.0);
    // Everything else is on the floor.
    let floor_py = frame.py_at(1e-6);
    let on_floor = curve
        .points
        .iter()
        .filter(|p| (f64::from(p.1) - floor_py).abs() <= 1.0)
        .count();
    assert!(
        on_floor >= curve.points.len() - 3,
        "{on_floor} of {}",
        curve.points.len()
    );
    // In decibels too (linear axis).
    let (frame, record) = psd_plot(&report, &psd_options(PsdMode::Decibel), (800, 500));
    let frame = frame.unwrap();
    let top = record.curve().points.iter().map(|p| p.1).min().unwrap();
    assert!(
        (f64::from(top) - frame.py_at(0.0)).abs() <= 1.0,
        "0 dB re 1 V^2/Hz"
    );
}

#[test]
fn decimation_keeps_every_column_extreme() {
    // 100 000 points over 800 columns with a spur; the pure function on its own.
    let n = 100_000;
    let x: Vec<f64> = (0..n).map(|i| i as f64 * 800.0 / n as f64).collect();
    let mut y: Vec<f64> = (0..n).map(|i| ((i * 7919) % 1000) as f64 * 1e-3).collect();
    y[54_321] = 60.0;
    y[777] = -60.0;
    let kept = decimate_min_max(&x, &y);
    assert!(kept.len() <= 4 * 800, "{}", kept.len());
    assert!(kept.contains(&(x[54_321], 60.0)));
    assert!(kept.contains(&(x[777], -60.0)));
    // Each column's minimum and maximum are among the kept points of that column.
    for column in 0..800 {
        let in_column = |x: f64| x.floor() as usize == column;
        let values: Vec<f64> = (0..n).filter(|&i| in_column(x[i])).map(|i| y[i]).collect();
        let kept_values: Vec<f64> = kept
            .iter()
            .filter(|p| in_column(p.0))
            .map(|p| p.1)
            .collect();
        let max = |v: &[f64]| v.iter().copied().fold(f64::MIN, f64::max);
        let min = |v: &[f64]| v.iter().copied().fold(f64::MAX, f64::min);
        assert_eq!(max(&values), max(&kept_values), "column {column}");
        assert_eq!(min(&values), min(&kept_values), "column {column}");
    }
    // Kept points stay in order.
    assert!(kept.windows(2).all(|w| w[0].0 <= w[1].0));
}

#[test]
fn decimation_keeps_everything_when_pixels_outnumber_points() {
    let x = [0.5, 3.2, 7.9, 12.0, 12.4];
    let y = [1.0, -2.0, 3.0, 4.0, 5.0];
    assert_eq!(decimate_min_max_indices(&x, &y), vec![0, 1, 2, 3, 4]);
    assert!(decimate_min_max(&[], &[]).is_empty());
    // Non-finite positions are skipped; lengths may differ.
    assert_eq!(
        decimate_min_max_indices(&[0.0, f64::NAN, 2.0], &[1.0, 2.0]),
        vec![0]
    );
}

#[test]
fn y_axis_states_the_unit_of_each_mode() {
    let report = noise_report();
    let cases = [
        (PsdMode::Density, "V^2/Hz", true),
        (PsdMode::AmplitudeDensity, "V/sqrt(Hz)", true),
        (PsdMode::PowerSpectrum, "V^2", true),
        (PsdMode::Decibel, "dB re 1 V^2/Hz", false),
    ];
    for (mode, unit, log) in cases {
        let (frame, record) = psd_plot(&report, &psd_options(mode), (800, 500));
        let frame = frame.unwrap();
        let description = record.y_description();
        assert!(description.contains(unit), "{mode}: {description}");
        assert!(
            description.ends_with(&format!("({unit})")),
            "{mode}: {description}"
        );
        assert_eq!(mode.unit(&report), unit);
        assert_eq!(frame.y_log, log, "{mode}");
        // The curve's value at 100 Hz in this mode is where the frame puts it.
        let bin = noisesonde::plot::nearest_bin(&report.psd.frequency_hz, 100.0).unwrap();
        let value = mode.value_at(&report.psd, bin).unwrap();
        let curve = record.curve();
        let point = curve.points[bin - 1];
        assert!(
            (f64::from(point.1) - frame.py_at(value)).abs() <= 1.0,
            "{mode}"
        );
    }
    // ASD = sqrt(PSD), power = PSD × ENBW (Heinzel et al. 2002, eq. 21 and 23), dB = 10 log10.
    let p = report.psd.density[10];
    let enbw = report.psd.enbw_hz;
    assert_eq!(
        PsdMode::AmplitudeDensity.value_at(&report.psd, 10),
        Some(p.sqrt())
    );
    assert_eq!(
        PsdMode::Decibel.value_at(&report.psd, 10),
        Some(10.0 * p.log10())
    );
    let power = PsdMode::PowerSpectrum.value_at(&report.psd, 10).unwrap();
    assert!((power - p * enbw).abs() <= 1e-15 * power);
}

#[test]
fn decibels_of_full_scale_say_what_full_scale_means() {
    let mut source = VecSource::new(noise(16 * SEGMENT_LEN, 3), FS_HZ);
    let report = analyze(&mut source, &settings(None)).unwrap();
    assert_eq!(report.unit, "FS");
    let (_, record) = psd_plot(&report, &psd_options(PsdMode::Decibel), (800, 500));
    assert!(record.y_description().contains("dB re 1 FS^2/Hz"));
    // A full-scale sine has mean square 1/2: 10 log10(0.5) = -3.01 dB re 1 FS^2.
    assert!(record.has_text("-3.01 dB re 1 FS^2"), "{:?}", record.texts);
    let (_, record) = psd_plot(&report, &psd_options(PsdMode::Density), (800, 500));
    assert!(!record.has_text("-3.01"));
}

#[test]
fn caption_states_window_segment_rbw_segments_and_dof() {
    let report = noise_report();
    let (_, record) = psd_plot(&report, &PsdPlotOptions::default(), (1200, 500));
    let caption: String = record
        .texts
        .iter()
        .filter(|t| t.text.contains("Welch") || t.text.contains("dof"))
        .map(|t| t.text.clone())
        .collect::<Vec<_>>()
        .join(" ");
    // Hann: ENBW 1.5 bins × 1000/256 Hz = 5.859375 Hz (Harris 1978, Table 1).
    for part in [
        "hann window",
        "segment 256 samples",
        "RBW (ENBW) 5.859 Hz",
        "segments",
        "dof",
    ] {
        assert!(caption.contains(part), "{part} not in {caption}");
    }
    assert!(caption.contains(&format!("{} segments", report.psd.segments)));
}

#[test]
fn tick_labels_are_short_and_readable() {
    let report = spur_report(500);
    for mode in PsdMode::ALL {
        let (frame, record) = psd_plot(&report, &psd_options(mode), (800, 500));
        let frame = frame.unwrap();
        let bottom = frame.top_px + frame.height_px;
        let x_labels: Vec<&str> = record
            .texts
            .iter()
            .filter(|t| !t.rotated && f64::from(t.pos.1) > bottom && !t.text.contains("Hz"))
            .map(|t| t.text.as_str())
            .collect();
        assert!(x_labels.len() >= 4, "{mode}: {x_labels:?}");
        for label in &x_labels {
            assert!(
                label.len() <= 4
                    && label
                        .chars()
                        .all(|c| c.is_ascii_digit() || ".kM".contains(c)),
                "{mode}: x label {label:?}"
            );
        }
        assert!(
            x_labels.contains(&"1k") && x_labels.contains(&"10k"),
            "{x_labels:?}"
        );
        let y_labels: Vec<&str> = record
            .texts
            .iter()
            .filter(|t| {
                !t.rotated && f64::from(t.pos.0) < frame.left_px && f64::from(t.pos.1) < bottom
            })
            .filter(|t| f64::from(t.pos.1) >= frame.top_px - 8.0)
            .map(|t| t.text.as_str())
            .collect();
        assert!(y_labels.len() >= 3, "{mode}: {y_labels:?}");
        for label in &y_labels {
            assert!(label.len() <= 5, "{mode}: y label {label:?}");
            assert!(label.parse::<f64>().is_ok(), "{mode}: y label {label:?}");
        }
    }
}

#[test]
fn confidence_band_lies_behind_the_curve_and_can_be_hidden() {
    let report = noise_report();
    for mode in PsdMode::ALL {
        let (frame, record) = psd_plot(&report, &psd_options(mode), (800, 500));
        let frame = frame.unwrap();
        let bands: Vec<&Shape> = record
            .polygons
            .iter()
            .filter(|p| p.rgb == rgb(colours::BAND))
            .collect();
        assert_eq!(bands.len(), 1, "{mode}");
        // The band's upper outline at the first bin is that bin's upper limit in this mode.
        let bin = 1;
        let upper = mode.from_density(report.psd.ci_upper[bin], report.psd.enbw_hz);
        let x0 = frame.left_px as i32;
        let top_at_first = bands[0]
            .points
            .iter()
            .filter(|p| p.0 == x0)
            .map(|p| p.1)
            .min()
            .unwrap();
        assert!(
            (f64::from(top_at_first) - frame.py_at(upper)).abs() <= 1.0,
            "{mode}: {top_at_first} vs {}",
            frame.py_at(upper)
        );
        // Drawn before the curve, which therefore lies on top.
        let options = PsdPlotOptions {
            show_ci: false,
            ..psd_options(mode)
        };
        let (_, record) = psd_plot(&report, &options, (800, 500));
        assert!(record.polygons.iter().all(|p| p.rgb != rgb(colours::BAND)));
    }
}

#[test]
fn two_cursors_shade_the_band_between_them() {
    let report = noise_report();
    let options = PsdPlotOptions {
        cursors_hz: vec![200.0, 50.0],
        ..PsdPlotOptions::default()
    };
    let (frame, record) = psd_plot(&report, &options, (800, 500));
    let frame = frame.unwrap();
    let lines = record.paths_of(colours::CURSOR);
    let mut xs: Vec<i32> = lines.iter().map(|l| l.points[0].0).collect();
    xs.sort();
    assert_eq!(xs, [frame.px_at(50.0) as i32, frame.px_at(200.0) as i32]);
    let shaded: Vec<&Shape> = record
        .filled_rects
        .iter()
        .filter(|r| r.rgb == rgb(colours::CURSOR) && r.alpha < 1.0)
        .collect();
    assert_eq!(shaded.len(), 1);
    let (a, b) = (shaded[0].points[0], shaded[0].points[1]);
    assert_eq!(
        (a.0, b.0),
        (frame.px_at(50.0) as i32, frame.px_at(200.0) as i32)
    );
    assert_eq!(
        (a.1, b.1),
        (frame.top_px as i32, (frame.top_px + frame.height_px) as i32)
    );

    let one = PsdPlotOptions {
        cursors_hz: vec![100.0],
        ..PsdPlotOptions::default()
    };
    let (_, record) = psd_plot(&report, &one, (800, 500));
    assert_eq!(record.paths_of(colours::CURSOR).len(), 1);
    assert!(record
        .filled_rects
        .iter()
        .all(|r| r.rgb != rgb(colours::CURSOR)));

    let three = PsdPlotOptions {
        cursors_hz: vec![1.0, 2.0, 3.0],
        ..PsdPlotOptions::default()
    };
    let (result, _) = psd_plot(&report, &three, (800, 500));
    assert_eq!(result, Err(PlotError::TooManyCursors { count: 3 }));
}

#[test]
fn zero_and_negative_values_are_clamped_to_the_axis_floor() {
    let mut report = noise_report();
    for bin in [3, 4, 5] {
        report.psd.density[bin] = 0.0;
        report.psd.power_spectrum[bin] = 0.0;
        report.psd.ci_lower[bin] = 0.0;
    }
    report.psd.density[6] = -1e-9;
    report.psd.power_spectrum[6] = -1e-9;
    for mode in PsdMode::ALL {
        let (frame, record) = psd_plot(&report, &psd_options(mode), (800, 500));
        let frame = frame.unwrap();
        assert!(
            frame.y_min.is_finite() && frame.y_max.is_finite(),
            "{mode}: {frame:?}"
        );
        let bottom = (frame.top_px + frame.height_px) as i32;
        let curve = record.curve();
        assert_eq!(curve.points.len(), report.psd.frequency_hz.len() - 1);
        for bin in [3, 4, 5, 6] {
            if mode == PsdMode::Decibel && bin == 6 {
                continue; // 10 log10 of a negative number is NaN: also drawn at the floor
            }
            assert_eq!(curve.points[bin - 1].1, bottom, "{mode}: bin {bin}");
        }
    }
}

#[test]
fn an_empty_psd_is_an_error_not_a_panic() {
    let mut report = noise_report();
    report.psd.frequency_hz.clear();
    report.psd.density.clear();
    let (result, _) = psd_plot(&report, &PsdPlotOptions::default(), (800, 500));
    let error = result.unwrap_err();
    assert_eq!(error, PlotError::EmptyPsd);
    assert!(error.to_string().contains("no PSD bins"), "{error}");

    let mut report = noise_report();
    report.psd.density.pop();
    let (result, _) = psd_plot(&report, &PsdPlotOptions::default(), (800, 500));
    assert!(matches!(
        result,
        Err(PlotError::LengthMismatch {
            what: "psd.density",
            ..
        })
    ));

    let mut report = noise_report();
    report.psd.frequency_hz.truncate(1);
    report.psd.density.truncate(1);
    report.psd.power_spectrum.truncate(1);
    report.psd.ci_lower.truncate(1);
    report.psd.ci_upper.truncate(1);
    let (result, _) = psd_plot(&report, &PsdPlotOptions::default(), (800, 500));
    assert_eq!(result, Err(PlotError::NoPositiveFrequency { bins: 1 }));
}

#[test]
fn bad_pixel_ratio_and_tiny_areas_are_errors() {
    let report = noise_report();
    for pixel_ratio in [0.0, -1.0, f64::NAN, 100.0] {
        let options = PsdPlotOptions {
            pixel_ratio,
            ..PsdPlotOptions::default()
        };
        let (result, _) = psd_plot(&report, &options, (800, 500));
        assert!(
            matches!(result, Err(PlotError::PixelRatio { .. })),
            "{pixel_ratio}"
        );
    }
    for size in [(40, 500), (800, 40), (1, 1), (0, 0)] {
        let (result, _) = psd_plot(&report, &PsdPlotOptions::default(), size);
        assert!(
            matches!(result, Err(PlotError::AreaTooSmall { .. })),
            "{size:?}: {result:?}"
        );
    }
}

#[test]
fn pixel_ratio_scales_fonts_and_lines() {
    let report = noise_report();
    let sizes = |ratio: f64, size: (u32, u32)| {
        let options = PsdPlotOptions {
            pixel_ratio: ratio,
            ..PsdPlotOptions::default()
        };
        let (frame, record) = psd_plot(&report, &options, size);
        let font = record
            .texts
            .iter()
            .find(|t| t.text == "100")
            .map(|t| t.size_px)
            .unwrap();
        (frame.unwrap(), font, record.curve().width_px)
    };
    let (frame1, font1, width1) = sizes(1.0, (800, 500));
    let (frame2, font2, width2) = sizes(2.0, (1600, 1000));
    assert_eq!(font2, 2.0 * font1);
    assert_eq!(width2, 2 * width1);
    // Same layout at twice the pixels, to within rounding of the label areas.
    assert!((frame2.left_px - 2.0 * frame1.left_px).abs() <= 3.0);
    assert!((frame2.width_px - 2.0 * frame1.width_px).abs() <= 4.0);
    assert!((frame2.height_px - 2.0 * frame1.height_px).abs() <= 4.0);
}

#[test]
fn options_parse_from_the_pages_json() {
    let options: PsdPlotOptions =
        serde_json::from_str(r#"{"mode":"asd","cursors_hz":[10,20],"pixel_ratio":2}"#).unwrap();
    assert_eq!(options.mode, PsdMode::AmplitudeDensity);
    assert!(options.show_ci, "default kept");
    assert_eq!(options.cursors_hz, [10.0, 20.0]);
    let options: PsdPlotOptions = serde_json::from_str("{}").unwrap();
    assert_eq!(options, PsdPlotOptions::default());
    let error = serde_json::from_str::<PsdPlotOptions>(r#"{"mode":"loud"}"#).unwrap_err();
    assert!(
        error
            .to_string()
            .contains("use one of density, asd, power, db"),
        "{error}"
    );
    let error = serde_json::from_str::<PsdPlotOptions>(r#"{"cursor_hz":[1]}"#).unwrap_err();
    assert!(
        error.to_string().contains("unknown field `cursor_hz`"),
        "{error}"
    );
    assert_eq!("DB".parse::<PsdMode>(), Ok(PsdMode::Decibel));
    assert_eq!(
        serde_json::to_string(&PsdMode::PowerSpectrum).unwrap(),
        r#""power""#
    );
    let options: AcfPlotOptions = serde_json::from_str(r#"{"mode":"autocovariance"}"#).unwrap();
    assert_eq!(options.mode, AcfMode::Autocovariance);
    assert!("correlation".parse::<AcfMode>().is_err());
}

// ---------------------------------------------------------------------------------------------
// ACF.

/// The ACF of a sine of frequency f is (A²/2)·cos(2π f τ), so its coefficient falls to 1/e at
/// τ = arccos(1/e)/(2π f) and first crosses zero at τ = 1/(4 f) (e.g. Bendat & Piersol 2010,
/// "Random Data", §5.1). The biased estimate tapers by (1 − τ/T), which moves these by well
/// under a sample here.
fn tone_report() -> Report {
    let f = 50.0;
    let samples: Vec<f64> = (0..16 * SEGMENT_LEN)
        .map(|n| 0.5 * (2.0 * std::f64::consts::PI * f * n as f64 / FS_HZ).sin())
        .collect();
    let mut source = VecSource::new(samples, FS_HZ);
    analyze(&mut source, &settings(Some("V"))).unwrap()
}

#[test]
fn acf_markers_appear_where_the_report_has_them() {
    let report = tone_report();
    let one_over_e_s = report.acf.one_over_e_s.unwrap();
    let zero_s = report.acf.zero_crossing_s.unwrap();
    let period_s = 1.0 / FS_HZ;
    assert!(
        (one_over_e_s - (-1f64).exp().acos() / (2.0 * std::f64::consts::PI * 50.0)).abs()
            < period_s
    );
    assert!((zero_s - 1.0 / 200.0).abs() < period_s);

    let (frame, record) = acf_plot(&report, &AcfPlotOptions::default());
    let frame = frame.unwrap();
    assert!(!frame.x_log && !frame.y_log);
    assert_eq!(frame.x_min, 0.0);
    assert_eq!(frame.x_max, *report.acf.lag_s.last().unwrap());
    assert!(record.has_text("1/e"), "{:?}", record.texts);
    assert!(record.has_text("first zero"));
    for (colour, lag_s) in [
        (colours::ONE_OVER_E, one_over_e_s),
        (colours::FIRST_ZERO, zero_s),
    ] {
        let marker = record.paths_of(colour);
        assert_eq!(marker.len(), 1);
        // plotters floors the position plus 0.001 pixel.
        assert!((f64::from(marker[0].points[0].0) - frame.px_at(lag_s)).abs() <= 1.0);
    }
    // The zero line spans the plot at y = 0.
    let zero = record.paths_of(colours::ZERO_LINE);
    assert_eq!(zero.len(), 1);
    assert!((f64::from(zero[0].points[0].1) - frame.py_at(0.0)).abs() <= 1.0);
    // Lags are labelled in ms (the largest lag is 256 ms).
    assert!(record.has_text("lag (ms)"));
    assert!(record.y_description().contains("coefficient"));

    let mut bare = report.clone();
    bare.acf.one_over_e_s = None;
    bare.acf.zero_crossing_s = None;
    let (_, record) = acf_plot(&bare, &AcfPlotOptions::default());
    assert!(!record.has_text("1/e") && !record.has_text("first zero"));
    assert!(record.paths_of(colours::ONE_OVER_E).is_empty());
}

#[test]
fn acf_y_axis_states_the_unit_of_each_mode() {
    let report = tone_report();
    for (mode, unit) in [
        (AcfMode::Coefficient, "(dimensionless)"),
        (AcfMode::Autocovariance, "(V^2)"),
        (AcfMode::Autocorrelation, "(V^2)"),
    ] {
        let options = AcfPlotOptions {
            mode,
            ..AcfPlotOptions::default()
        };
        let (frame, record) = acf_plot(&report, &options);
        let frame = frame.unwrap();
        assert!(record.y_description().contains(unit), "{mode}");
        // R(0) of a 0.5-amplitude sine is its mean square, 0.125 V^2; the curve starts there.
        let first = record.curve().points[0];
        let value0 = mode.values(&report.acf)[0];
        assert!(
            (f64::from(first.1) - frame.py_at(value0)).abs() <= 1.0,
            "{mode}"
        );
    }
    assert!((report.acf.autocorrelation[0] - 0.125).abs() < 1e-12);
}

#[test]
fn an_empty_acf_is_an_error() {
    let mut report = tone_report();
    report.acf.lag_s.clear();
    let (result, _) = acf_plot(&report, &AcfPlotOptions::default());
    assert_eq!(result, Err(PlotError::EmptyAcf));
}

// ---------------------------------------------------------------------------------------------
// A real backend.

#[test]
fn draws_svg_with_a_real_backend() {
    use plotters::prelude::SVGBackend;
    let report = noise_report();
    let mut svg = String::new();
    {
        let area = SVGBackend::with_string(&mut svg, (800, 500)).into_drawing_area();
        let options = PsdPlotOptions {
            mode: PsdMode::AmplitudeDensity,
            cursors_hz: vec![20.0, 200.0],
            ..PsdPlotOptions::default()
        };
        draw_psd(&area, &report, &options).unwrap();
    }
    assert!(svg.starts_with("<svg"));
    assert!(svg.contains("V/sqrt(Hz)") && svg.contains("frequency (Hz)"));
    assert!(!svg.contains("NaN"));
    let mut acf_svg = String::new();
    {
        let area = SVGBackend::with_string(&mut acf_svg, (800, 400)).into_drawing_area();
        draw_acf(&area, &tone_report(), &AcfPlotOptions::default()).unwrap();
    }
    assert!(acf_svg.contains("first zero"));
    // For a look by eye: NOISESONDE_PLOT_DIR=/tmp/plots cargo test --test plot
    if let Some(dir) = std::env::var_os("NOISESONDE_PLOT_DIR") {
        let dir = std::path::PathBuf::from(dir);
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(dir.join("psd.svg"), &svg).unwrap();
        std::fs::write(dir.join("acf.svg"), &acf_svg).unwrap();
        let mut source = VecSource::new(noise(16 * SEGMENT_LEN, 3), FS_HZ);
        let full_scale = analyze(&mut source, &settings(None)).unwrap();
        for (name, report, mode) in [
            ("psd-db-fs.svg", &full_scale, PsdMode::Decibel),
            ("psd-spur.svg", &spur_report(12_345), PsdMode::Density),
        ] {
            let mut text = String::new();
            {
                let area = SVGBackend::with_string(&mut text, (800, 500)).into_drawing_area();
                draw_psd(&area, report, &psd_options(mode)).unwrap();
            }
            std::fs::write(dir.join(name), text).unwrap();
        }
    }
}

/// A live view's peak hold and reference are drawn on the same axes as the average: a peak
/// hold ten times the average lies one decade (in density) above it, the axis grows to hold
/// it, the reference is dashed, and the caption names both. A trace of the wrong length is an
/// error, not a panic.
#[test]
fn peak_hold_and_reference_traces_share_the_axes() {
    let report = noise_report();
    let peak: Vec<f64> = report.psd.density.iter().map(|p| 10.0 * p).collect();
    let reference: Vec<f64> = report.psd.density.iter().map(|p| 0.5 * p).collect();
    let options = PsdPlotOptions {
        show_ci: false,
        traces: vec![
            PsdTrace {
                kind: TraceKind::PeakHold,
                label: "peak hold".into(),
                density: peak.clone(),
            },
            PsdTrace {
                kind: TraceKind::Reference,
                label: "reference".into(),
                density: reference,
            },
        ],
        ..psd_options(PsdMode::Density)
    };
    let (frame, record) = psd_plot(&report, &options, (800, 500));
    let frame = frame.unwrap();
    assert!(record.has_text("peak hold: pink"));
    assert!(record.has_text("reference: grey, dashed"));
    let max_peak = peak[1..].iter().copied().fold(f64::MIN, f64::max);
    assert!(
        frame.py_at(max_peak) >= frame.top_px,
        "the axis holds the peak hold"
    );
    let peaks = record.paths_of(colours::PEAK_HOLD);
    assert_eq!(peaks.len(), 1);
    // At the first bin, 10× the density is one decade of the log axis above the average.
    let x0 = frame.left_px as i32;
    let y_at = |shape: &Shape| {
        shape
            .points
            .iter()
            .find(|p| p.0 == x0)
            .map(|p| f64::from(p.1))
    };
    let decade_px = frame.py_at(1.0) - frame.py_at(10.0);
    let gap = y_at(&record.curve()).unwrap() - y_at(peaks[0]).unwrap();
    assert!(
        (gap - decade_px).abs() <= 1.5,
        "{gap} px vs a decade of {decade_px} px"
    );
    assert!(
        record.paths_of(colours::REFERENCE).len() > 10,
        "the reference is drawn in dashes"
    );

    let short = PsdPlotOptions {
        traces: vec![PsdTrace {
            kind: TraceKind::PeakHold,
            label: "peak hold".into(),
            density: vec![1.0; 3],
        }],
        ..psd_options(PsdMode::Density)
    };
    let (result, _) = psd_plot(&report, &short, (800, 500));
    assert!(
        matches!(result, Err(PlotError::LengthMismatch { .. })),
        "{result:?}"
    );
}

// ---------------------------------------------------------------------------------------------
// Stationarity: segment statistics, stretch autocorrelations, spectrogram.

/// Samples of the stationarity reports: 2^18 at 1 kHz (262 s), enough for the default M = 20
/// segments and a spectrogram of many columns.
const STATIONARITY_LEN: usize = 1 << 18;

/// One pixel: where the recorder's integer coordinates may round a continuous position.
const ONE_PX: f64 = 1.0;

/// The report of `samples` at 1 kHz in volts with default settings.
fn volts_report(samples: Vec<f64>) -> Report {
    let mut source = VecSource::new(samples, FS_HZ);
    let settings = Settings {
        calibration: Calibration {
            scale_units_per_fs: 1.0,
            unit: Some("V".to_string()),
        },
        ..Settings::default()
    };
    analyze(&mut source, &settings).expect("analysis")
}

/// Gaussian white noise of σ = 0.1 (shared by several tests; analysed once).
fn white_stationarity_report() -> &'static Report {
    static REPORT: std::sync::OnceLock<Report> = std::sync::OnceLock::new();
    REPORT.get_or_init(|| {
        let x: Vec<f64> = common::noise::Noise::new(11)
            .normals(STATIONARITY_LEN)
            .into_iter()
            .map(|v| 0.1 * v)
            .collect();
        volts_report(x)
    })
}

fn draw_with<F>(draw: F) -> (Result<PlotFrame, PlotError>, Record)
where
    F: FnOnce(
        &plotters::drawing::DrawingArea<Recorder, plotters::coord::Shift>,
    ) -> Result<PlotFrame, PlotError>,
{
    let (backend, record) = Recorder::new(900, 700);
    let area = backend.into_drawing_area();
    let result = draw(&area);
    drop(area);
    let record = Rc::try_unwrap(record).expect("one owner").into_inner();
    (result, record)
}

fn centre(shape: &Shape) -> (f64, f64) {
    let (a, b) = (shape.points[0], shape.points[1]);
    (f64::from(a.0 + b.0) / 2.0, f64::from(a.1 + b.1) / 2.0)
}

#[test]
fn segment_chart_draws_every_segment_and_the_whole_record_line() {
    // Closed form: the whole-record value is the plain mean of the M segment means (equal
    // segment lengths), and the band is that ± 1.96 × their sample standard deviation
    // (common practice).
    let report = white_stationarity_report();
    let section = report
        .stationarity
        .as_ref()
        .expect("a stationarity section");
    let means = &section.segments.mean;
    let m = means.len();
    assert!(m >= 20, "{m} segments");
    let (result, record) =
        draw_with(|area| draw_segment_statistics(area, report, &SegmentPlotOptions::default()));
    let frame = result.expect("segment chart");

    let points: Vec<&Shape> = record
        .filled_rects
        .iter()
        .filter(|s| s.rgb == rgb(SEGMENT_POINTS))
        .collect();
    assert_eq!(points.len(), 2 * m, "M points in each of two panels");
    let upper: Vec<(f64, f64)> = points
        .iter()
        .map(|s| centre(s))
        .filter(|&(_, y)| frame.contains_py(y))
        .collect();
    assert_eq!(upper.len(), m, "M points in the upper panel");
    let (x0, _) = upper[0];
    assert!((x0 - frame.px_at(section.segments.start_s[0])).abs() <= ONE_PX);

    let whole = means.iter().sum::<f64>() / m as f64;
    let sd = (means.iter().map(|v| (v - whole).powi(2)).sum::<f64>() / (m - 1) as f64).sqrt();
    let line = record
        .paths_of(WHOLE_RECORD)
        .into_iter()
        .find(|p| frame.contains_py(f64::from(p.points[0].1)))
        .expect("a whole-record line in the upper panel");
    let py = f64::from(line.points[0].1);
    assert!(
        (py - frame.py_at(whole)).abs() <= ONE_PX,
        "line at {py} px, mean {whole} at {} px",
        frame.py_at(whole)
    );
    let band = record
        .filled_rects
        .iter()
        .find(|s| s.rgb == rgb(colours::BAND) && frame.contains_py(centre(s).1))
        .expect("a band in the upper panel");
    let (top, bottom) = (f64::from(band.points[0].1), f64::from(band.points[1].1));
    assert!(
        (top - frame.py_at(whole + 1.96 * sd)).abs() <= ONE_PX,
        "band top"
    );
    assert!(
        (bottom - frame.py_at(whole - 1.96 * sd)).abs() <= ONE_PX,
        "band bottom"
    );
    assert!(record.has_text("segment mean (V)"));
    assert!(record.has_text("segment mean square (V^2)"));
    assert!(record.has_text(&format!("M = {m} segments")));
}

#[test]
fn segment_caption_says_whether_each_line_is_stationary() {
    // A step of 10 σ in the mean half-way through cannot pass the reverse arrangements test
    // (Bendat & Piersol 2010, ch. 4: a monotonic trend of the segment means); white noise
    // passes at α = 0.05 for this seed.
    let mut noise = common::noise::Noise::new(23);
    let stepped: Vec<f64> = (0..STATIONARITY_LEN)
        .map(|n| 0.1 * noise.normal() + if n < STATIONARITY_LEN / 2 { 0.0 } else { 1.0 })
        .collect();
    let stepped = volts_report(stepped);
    let (result, record) =
        draw_with(|area| draw_segment_statistics(area, &stepped, &SegmentPlotOptions::default()));
    result.expect("segment chart of a step");
    assert!(
        record.has_text("mean: not stationary"),
        "{:?}",
        record.texts
    );

    let (result, record) = draw_with(|area| {
        draw_segment_statistics(
            area,
            white_stationarity_report(),
            &SegmentPlotOptions::default(),
        )
    });
    result.expect("segment chart of noise");
    assert!(record.has_text("mean: stationary ("), "{:?}", record.texts);
    assert!(record.has_text("reverse arrangements A = "));
    assert!(record.has_text("α = 0.05"));
}

#[test]
fn stretch_chart_draws_every_stretch_the_pooled_curve_and_the_band() {
    // J stretch curves of K + 1 lags in distinct colours, one thicker pooled curve, and a band
    // polygon of the K + 1 upper and K + 1 lower edges (common practice).
    let report = white_stationarity_report();
    let shape = &report
        .stationarity
        .as_ref()
        .expect("stationarity")
        .autocorrelation
        .comparison;
    let j = shape.stretches;
    let lags = shape.lag_s.len();
    let (result, record) =
        draw_with(|area| draw_stretch_acf(area, report, &StretchPlotOptions::default()));
    let frame = result.expect("stretch chart");
    let curves: Vec<&Shape> = record
        .paths
        .iter()
        .filter(|p| STRETCH_COLOURS.iter().any(|&c| p.rgb == rgb(c)) && p.points.len() == lags)
        .collect();
    assert_eq!(curves.len(), j, "one curve per stretch");
    let distinct: std::collections::HashSet<_> = curves.iter().map(|c| c.rgb).collect();
    assert_eq!(distinct.len(), j.min(STRETCH_COLOURS.len()));
    let pooled = record.paths_of(POOLED);
    assert_eq!(pooled.len(), 1, "one pooled curve");
    assert!(pooled[0].width_px > curves[0].width_px, "pooled is thicker");
    let last = *pooled[0].points.last().expect("points");
    let expected_py = frame.py_at(*shape.pooled.last().expect("pooled"));
    assert!((f64::from(last.1) - expected_py).abs() <= ONE_PX);
    let band = record
        .polygons
        .iter()
        .find(|p| p.rgb == rgb(colours::BAND))
        .expect("a band");
    assert_eq!(band.points.len(), 2 * lags);
    assert!(record.has_text("stretch 1: 0 s–"), "{:?}", record.texts);
    assert!(record.has_text("largest deviation D = "));
}

/// Rectangles drawn inside `frame` in a colour of the sequential scale's range (not the
/// background): the heatmap's cells.
fn cells<'r>(record: &'r Record, frame: &PlotFrame) -> Vec<&'r Shape> {
    record
        .filled_rects
        .iter()
        .filter(|s| {
            s.rgb != rgb(colours::BACKGROUND)
                && s.points
                    .iter()
                    .all(|p| frame.contains_px(f64::from(p.0)) && frame.contains_py(f64::from(p.1)))
        })
        .collect()
}

/// ITU-R BT.709 luma of a colour.
fn luma(c: (u8, u8, u8)) -> f64 {
    0.2126 * f64::from(c.0) + 0.7152 * f64::from(c.1) + 0.0722 * f64::from(c.2)
}

#[test]
fn spectrogram_draws_every_cell_and_a_loud_tone_at_the_top_of_the_scale() {
    // A 125 Hz tone of amplitude 1 over noise of σ = 0.01: its row holds the largest densities,
    // which the 99.9th percentile colour range clamps to the top stop (a choice of this
    // project; the tone row is 1 of ≤ 256 rows, more than 0.1 % of the cells).
    const TONE_HZ: f64 = 125.0;
    let mut noise = common::noise::Noise::new(5);
    let x: Vec<f64> = (0..STATIONARITY_LEN)
        .map(|n| {
            (2.0 * std::f64::consts::PI * TONE_HZ * n as f64 / FS_HZ).sin() + 0.01 * noise.normal()
        })
        .collect();
    let report = volts_report(x);
    let spectrogram = report
        .stationarity
        .as_ref()
        .and_then(|s| s.spectrogram.as_ref())
        .expect("a spectrogram");
    let rows = spectrogram
        .frequency_hz
        .iter()
        .filter(|&&f| f > 0.0)
        .count();
    let columns = spectrogram.start_s.len();
    let (result, record) =
        draw_with(|area| draw_spectrogram(area, &report, &SpectrogramPlotOptions::default()));
    let frame = result.expect("spectrogram");
    let cells = cells(&record, &frame);
    assert_eq!(
        cells.len(),
        rows * columns,
        "{rows} rows × {columns} columns"
    );

    let tone_row = nearest_bin(&spectrogram.frequency_hz, TONE_HZ).expect("row");
    let top = rgb(SEQUENTIAL_STOPS[SEQUENTIAL_STOPS.len() - 1]);
    let row_of =
        |s: &Shape| nearest_bin(&spectrogram.frequency_hz, frame.y_at(centre(s).1)).expect("row");
    let top_rows: Vec<usize> = cells
        .iter()
        .filter(|s| s.rgb == top)
        .map(|s| row_of(s))
        .collect();
    assert!(
        top_rows.contains(&tone_row),
        "tone row {tone_row} not at the top: {top_rows:?}"
    );
    assert!(
        top_rows.iter().all(|r| r.abs_diff(tone_row) <= 1),
        "top colour outside the tone's rows: {top_rows:?}"
    );
    assert!(record.has_text("dB re 1 V^2/Hz"), "{:?}", record.texts);
}

#[test]
fn spectrogram_follows_a_tone_that_steps_from_50_to_200_hz() {
    // Closed form: columns wholly in the first half are brightest in the row nearest 50 Hz,
    // columns wholly in the second half in the row nearest 200 Hz (±1 row for leakage).
    let mut noise = common::noise::Noise::new(9);
    let half = STATIONARITY_LEN / 2;
    let x: Vec<f64> = (0..STATIONARITY_LEN)
        .map(|n| {
            let f = if n < half { 50.0 } else { 200.0 };
            (2.0 * std::f64::consts::PI * f * n as f64 / FS_HZ).sin() + 0.01 * noise.normal()
        })
        .collect();
    let report = volts_report(x);
    let spectrogram = report
        .stationarity
        .as_ref()
        .and_then(|s| s.spectrogram.as_ref())
        .expect("a spectrogram");
    let (result, record) =
        draw_with(|area| draw_spectrogram(area, &report, &SpectrogramPlotOptions::default()));
    let frame = result.expect("spectrogram");
    let cells = cells(&record, &frame);
    let half_s = half as f64 / FS_HZ;
    let row_50 = nearest_bin(&spectrogram.frequency_hz, 50.0).expect("row");
    let row_200 = nearest_bin(&spectrogram.frequency_hz, 200.0).expect("row");
    let mut checked = 0;
    for (start, end) in spectrogram.start_s.iter().zip(&spectrogram.end_s) {
        let expected = if *end <= half_s {
            row_50
        } else if *start >= half_s {
            row_200
        } else {
            continue;
        };
        let mid = frame.px_at((start + end) / 2.0);
        let column: Vec<&&Shape> = cells
            .iter()
            .filter(|s| (centre(s).0 - mid).abs() <= ONE_PX)
            .collect();
        let brightest = column.iter().map(|s| luma(s.rgb)).fold(0.0, f64::max);
        for s in column.iter().filter(|s| luma(s.rgb) == brightest) {
            let row = nearest_bin(&spectrogram.frequency_hz, frame.y_at(centre(s).1)).expect("row");
            assert!(
                row.abs_diff(expected) <= 1,
                "column {start}–{end} s brightest in row {row}, expected {expected}"
            );
        }
        checked += 1;
    }
    assert!(checked >= 4, "{checked} columns checked");
}

#[test]
fn sequential_scale_runs_from_dark_to_light() {
    // A choice of this project: the ends are the first and last stops, and BT.709 luma never
    // falls along the scale.
    assert_eq!(sequential_colour(0.0), SEQUENTIAL_STOPS[0]);
    assert_eq!(sequential_colour(f64::NAN), SEQUENTIAL_STOPS[0]);
    assert_eq!(sequential_colour(1.0), SEQUENTIAL_STOPS[4]);
    let lumas: Vec<f64> = (0..=100)
        .map(|k| luma(rgb(sequential_colour(f64::from(k) / 100.0))))
        .collect();
    assert!(lumas.windows(2).all(|w| w[1] >= w[0]), "{lumas:?}");
    // Percentiles by nearest rank (common practice): of 0..=999, the 1st is 9, the 99.9th 998.
    let values: Vec<f64> = (0..1000).map(f64::from).collect();
    assert_eq!(colour_range_db(&values), (9.0, 998.0));
}

#[test]
fn stationarity_charts_without_a_section_are_errors() {
    // 300 samples is one PSD segment but far too short for M = 20 segments (the analysis then
    // leaves the section out and warns).
    let mut source = VecSource::new(noise(300, 3), FS_HZ);
    let short = analyze(&mut source, &settings(Some("V"))).expect("analysis of 300 samples");
    assert!(short.stationarity.is_none());
    let (result, _) =
        draw_with(|area| draw_segment_statistics(area, &short, &SegmentPlotOptions::default()));
    assert_eq!(result, Err(PlotError::NoStationarity));
    let (result, _) =
        draw_with(|area| draw_stretch_acf(area, &short, &StretchPlotOptions::default()));
    assert_eq!(result, Err(PlotError::NoStationarity));
    let (result, _) =
        draw_with(|area| draw_spectrogram(area, &short, &SpectrogramPlotOptions::default()));
    assert_eq!(result, Err(PlotError::NoStationarity));

    let mut without = white_stationarity_report().clone();
    if let Some(section) = without.stationarity.as_mut() {
        section.spectrogram = None;
    }
    let (result, _) =
        draw_with(|area| draw_spectrogram(area, &without, &SpectrogramPlotOptions::default()));
    assert_eq!(result, Err(PlotError::NoSpectrogram));
}

#[test]
fn stationarity_options_parse_from_json() {
    // From memory: serde's `default` fills missing fields; `deny_unknown_fields` rejects typos.
    let o: SegmentPlotOptions = serde_json::from_str(r#"{"pixel_ratio": 2}"#).expect("parse");
    assert_eq!(o.pixel_ratio, 2.0);
    let o: StretchPlotOptions = serde_json::from_str("{}").expect("parse");
    assert_eq!(o.pixel_ratio, 1.0);
    assert!(serde_json::from_str::<SpectrogramPlotOptions>(r#"{"pixelratio": 2}"#).is_err());
}

/// The ensemble chart: the across-record mean over time with its overall line, and a caption
/// that says whether the ensemble is ergodic in the mean. Three records, each its own constant
/// (0.2, −0.3, 0.5) plus white noise, are the textbook non-ergodic ensemble; the overall line
/// sits at the mean of the plotted values (closed form), one point per segment.
#[test]
fn ensemble_chart_draws_the_mean_over_time_and_says_ergodic_or_not() {
    use noisesonde::ensemble_analysis::{analyze_ensemble, EnsembleSettings};
    use noisesonde::plot::draw_ensemble_over_time;
    let n = 1 << 16;
    let mut sources: Vec<VecSource> = [0.2, -0.3, 0.5]
        .iter()
        .enumerate()
        .map(|(k, offset)| {
            let x = noise(n, 40 + k as u64)
                .iter()
                .map(|v| offset + 0.05 * v)
                .collect();
            VecSource::new(x, FS_HZ)
        })
        .collect();
    let mut refs: Vec<&mut dyn noisesonde::io::SampleSource> = sources
        .iter_mut()
        .map(|s| s as &mut dyn noisesonde::io::SampleSource)
        .collect();
    let report = analyze_ensemble(&mut refs, &EnsembleSettings::default()).unwrap();
    assert!(!report.ensemble.mean.ergodic);
    let over = &report.ensemble.over_time;
    let (result, record) =
        draw_with(|area| draw_ensemble_over_time(area, &report, &SegmentPlotOptions::default()));
    let frame = result.expect("ensemble chart");
    assert!(record.has_text("mean: NOT ergodic"));
    assert!(record.has_text("3 records"));
    let points = record
        .filled_rects
        .iter()
        .filter(|s| s.rgb == rgb(SEGMENT_POINTS))
        .count();
    assert_eq!(
        points,
        2 * over.mean.len(),
        "one point per segment in each panel"
    );
    let whole = over.mean.iter().sum::<f64>() / over.mean.len() as f64;
    let line = record
        .paths_of(WHOLE_RECORD)
        .into_iter()
        .find(|p| frame.contains_py(f64::from(p.points[0].1)))
        .expect("the overall line in the upper panel");
    assert!((f64::from(line.points[0].1) - frame.py_at(whole)).abs() <= ONE_PX);
}
