//! Live sessions natively: captured blocks in, frames out, checked against closed forms of the
//! signal written into the blocks (a sine of amplitude A has mean square A²/2; white noise of
//! standard deviation σ at f_s has the one-sided density 2σ²/f_s), the level conventions of
//! AES17 and ISO 1683 (20 µPa), and the crate's own WAV reader for recordings.

mod common;

use std::io::Cursor;

use common::noise::Noise;
use noisesonde::analysis::Settings;
use noisesonde::io::{open, InputOptions, SourceInfo, WavEncoding};
use noisesonde::listen::{LiveSession, LiveSettings};
use noisesonde::units::Calibration;
use noisesonde::{AnalysisError, Error, SettingsError};

const FS_HZ: f64 = 48_000.0;
/// Frames per captured block, as the page's worklet sends them.
const BLOCK_FRAMES: usize = 1024;
/// The tone: 1 kHz, amplitude 0.1 of full scale (−20 dBFS after AES17).
const TONE_HZ: f64 = 1000.0;
const TONE_AMPLITUDE: f64 = 0.1;
/// The noise: σ = 0.003 of full scale.
const NOISE_SD: f64 = 0.003;

fn capture(channels: usize, channel: usize) -> SourceInfo {
    SourceInfo {
        name: "live input".into(),
        format: "test capture".into(),
        channels,
        channel,
        channel_name: None,
        channel_names: Vec::new(),
        sample_rate_hz: FS_HZ,
        bits_per_sample: Some(32),
        full_scale: true,
        clip_level_fs: Some(1.0),
        declared_frames: None,
    }
}

/// `seconds` of tone plus noise on channel 1 of a two-channel capture (channel 0 holds
/// something else), pushed in blocks laid out as the worklet lays them out.
fn listen(session: &mut LiveSession, seconds: f64, amplitude: f64, seed: u64) -> Vec<f64> {
    let n = (seconds * FS_HZ) as usize;
    let mut noise = Noise::new(seed);
    let signal: Vec<f64> = (0..n)
        .map(|i| {
            amplitude * (2.0 * std::f64::consts::PI * TONE_HZ * i as f64 / FS_HZ).sin()
                + NOISE_SD * noise.normal()
        })
        .collect();
    let mut block = vec![0f32; 2 * BLOCK_FRAMES];
    for chunk in signal.chunks_exact(BLOCK_FRAMES) {
        for (i, &x) in chunk.iter().enumerate() {
            block[i] = 0.5; // channel 0: a constant the session must not see
            block[BLOCK_FRAMES + i] = x as f32;
        }
        session.push_block(&block, BLOCK_FRAMES, 2, 0).unwrap();
    }
    signal
}

fn session(settings: &Settings) -> LiveSession {
    LiveSession::new(&capture(2, 1), settings, &LiveSettings::default()).unwrap()
}

#[test]
fn readouts_match_the_signal_written_into_the_capture() {
    let mut live = session(&Settings::default());
    listen(&mut live, 6.0, TONE_AMPLITUDE, 3);
    let (report, frame) = live.frame().expect("a frame after 6 s");
    let tone_ms = TONE_AMPLITUDE * TONE_AMPLITUDE / 2.0;
    let noise_ms = NOISE_SD * NOISE_SD;
    // Samples went through f32, as from a browser: the tone's mean square is A²/2 to 1e-7.
    let tone = frame.tone.expect("the tone stands out");
    assert!(
        (tone.frequency_hz - TONE_HZ).abs() < 0.1,
        "{}",
        tone.frequency_hz
    );
    assert!(
        (tone.rms / tone_ms.sqrt() - 1.0).abs() < 0.005,
        "{}",
        tone.rms
    );
    // AES17: a full-scale sine (mean square 1/2) reads 0 dBFS, so A = 0.1 reads −20 dBFS.
    assert!((tone.level_db + 20.0).abs() < 0.05, "{}", tone.level_db);
    assert_eq!(frame.level_unit, "dBFS");
    let floor = frame.floor.expect("a floor");
    let expected_density = 2.0 * noise_ms / FS_HZ;
    assert!(
        (floor.density / expected_density - 1.0).abs() < 0.05,
        "floor {} vs {expected_density}",
        floor.density
    );
    // The session's moments saw channel 1 only (channel 0 is a constant 0.5).
    let rms = (tone_ms + noise_ms).sqrt();
    assert!((report.moments.rms / rms - 1.0).abs() < 0.002);
    assert!(report.moments.mean.abs() < 1e-3);
    // Leq: every segment holds the tone and the noise; Z-weighted it is their total.
    let z = &frame.levels[0];
    let lzeq = 10.0 * ((tone_ms + noise_ms) / 0.5).log10();
    let session_leq = z.leq_session_db.unwrap();
    assert!((session_leq - lzeq).abs() < 0.05, "{session_leq} vs {lzeq}");
    assert!(z.max_db.unwrap() >= session_leq && z.min_db.unwrap() <= session_leq);
    // A-weighting is 0 dB at 1 kHz (IEC 61672-1 Table 3): only the noise is weighted away.
    let laeq = frame.levels[1].leq_session_db.unwrap();
    assert!(laeq < session_leq && session_leq - laeq < 0.05, "{laeq}");
    // Bands: the 1 kHz third holds the tone and 230.8 Hz of noise (IEC 61260-1 edges); the
    // bands add up to the overall level of their span.
    let thirds = frame
        .bands
        .iter()
        .find(|b| b.fraction.to_string() == "third" && b.weighting.to_string() == "z")
        .unwrap();
    let band = thirds
        .bands
        .iter()
        .find(|b| b.band.nominal_hz == 1000.0)
        .unwrap();
    let band_power = tone_ms + expected_density * (band.band.upper_hz - band.band.lower_hz);
    assert!((band.level_db - 10.0 * (band_power / 0.5).log10()).abs() < 0.05);
    let sum: f64 = thirds.bands.iter().map(|b| b.power).sum();
    assert!((sum / thirds.overall_power - 1.0).abs() < 1e-12);
    // The live PSD carries its own degrees of freedom and interval.
    assert!(report.psd.segments > 1 && report.psd.dof > 2.0);
    assert!(report.warnings[0].starts_with("Live:"));
    assert_eq!(frame.peak_density.len(), report.psd.density.len());
    assert!(frame
        .peak_density
        .iter()
        .zip(&report.psd.density)
        .all(|(peak, mean)| *peak >= mean * (1.0 - 1e-12)));
}

#[test]
fn calibrating_from_a_calibrator_tone_gives_its_factor_and_then_reads_94_db() {
    // A calibrator at 94 dB SPL: 20 µPa × 10^(94/20) = 1.002374 Pa rms (REFERENCES §9).
    let reference_pa = 20e-6 * 10f64.powf(94.0 / 20.0);
    let amplitude = 0.25;
    let mut live = session(&Settings::default());
    listen(&mut live, 3.0, amplitude, 5);
    let reading = live.calibrator(1000.0, reference_pa).unwrap();
    let expected = reference_pa / (amplitude / 2f64.sqrt());
    assert!(
        (reading.factor / expected - 1.0).abs() < 0.005,
        "{}",
        reading.factor
    );
    // With that factor in the settings, the same tone reads 94 dB SPL.
    let settings = Settings {
        calibration: Calibration {
            scale_units_per_fs: reading.factor,
            unit: Some("Pa".into()),
        },
        ..Settings::default()
    };
    let mut calibrated = session(&settings);
    listen(&mut calibrated, 3.0, amplitude, 6);
    let (report, frame) = calibrated.frame().unwrap();
    assert_eq!(report.unit, "Pa");
    assert_eq!(frame.level_unit, "dB SPL");
    let tone = frame.tone.unwrap();
    assert!((tone.level_db - 94.0).abs() < 0.05, "{}", tone.level_db);
    // Nothing near 5 kHz: the calibration is refused with a message, not guessed.
    let err = calibrated.calibrator(5000.0, reference_pa).unwrap_err();
    assert!(matches!(err, AnalysisError::NoCalibratorTone { .. }));
    assert!(err.to_string().contains("5000 Hz"));
}

#[test]
fn a_recording_holds_the_last_seconds_as_captured() {
    let live_settings = LiveSettings {
        record_s: 2.0,
        ..LiveSettings::default()
    };
    let mut live = LiveSession::new(&capture(2, 1), &Settings::default(), &live_settings).unwrap();
    let signal = listen(&mut live, 3.0, 0.5, 8);
    let pushed = signal.len() / BLOCK_FRAMES * BLOCK_FRAMES;
    for (encoding, exact) in [(WavEncoding::Float32, true), (WavEncoding::Pcm24, false)] {
        let bytes = live.recording(1.5, encoding).unwrap();
        let mut source = open(Cursor::new(bytes), "rec.wav", &InputOptions::default()).unwrap();
        assert_eq!(source.info().sample_rate_hz, FS_HZ);
        let mut back = vec![0.0; 100_000];
        let mut got = 0;
        loop {
            let n = source.read(&mut back[got..]).unwrap();
            if n == 0 {
                break;
            }
            got += n;
        }
        assert_eq!(got, 72_000, "1.5 s at 48 kHz");
        let expected = &signal[pushed - got..pushed];
        for (i, (a, b)) in back[..got].iter().zip(expected).enumerate() {
            // f32 as captured; 24-bit PCM within half a code (2^-24).
            let want = f64::from(*b as f32);
            let tol = if exact {
                0.0
            } else {
                0.5 / 8_388_608.0 + 1e-12
            };
            assert!(
                (a - want).abs() <= tol,
                "{encoding:?} sample {i}: {a} vs {want}"
            );
        }
    }
    // More than the ring holds gives what it holds (2 s).
    let bytes = live.recording(100.0, WavEncoding::Float32).unwrap();
    let source = open(Cursor::new(bytes), "rec.wav", &InputOptions::default()).unwrap();
    assert_eq!(source.info().declared_frames, Some(96_000));
}

#[test]
fn overload_is_flagged_until_the_next_frame_and_counted() {
    let mut live = session(&Settings::default());
    listen(&mut live, 1.0, 0.1, 9);
    let mut block = vec![0f32; 2 * BLOCK_FRAMES];
    block[BLOCK_FRAMES + 7] = 1.0; // channel 1 reaches full scale once
    block[3] = 1.0; // channel 0 too, but it is not the one analysed
    live.push_block(&block, BLOCK_FRAMES, 2, 0).unwrap();
    let (report, frame) = live.frame().unwrap();
    assert!(frame.overload);
    assert_eq!(report.moments.clipped_samples, Some(1));
    let (_, frame) = live.frame().unwrap();
    assert!(!frame.overload, "the flag covers one frame");
}

#[test]
fn bad_blocks_and_settings_are_refused_with_their_values() {
    let mut live = session(&Settings::default());
    let err = live
        .push_block(&[0.0; 100], BLOCK_FRAMES, 2, 0)
        .unwrap_err();
    assert!(matches!(
        err,
        Error::Analysis(AnalysisError::BlockShape { len: 100, .. })
    ));
    let err = live
        .push_block(&vec![0.0; 3 * BLOCK_FRAMES], BLOCK_FRAMES, 3, 0)
        .unwrap_err();
    assert!(err.to_string().contains("expects 2 channels"), "{err}");
    let mut nan = vec![0f32; 2 * BLOCK_FRAMES];
    nan[BLOCK_FRAMES + 5] = f32::NAN;
    let err = live.push_block(&nan, BLOCK_FRAMES, 2, 0).unwrap_err();
    assert!(matches!(
        err,
        Error::Analysis(AnalysisError::NonFiniteSample { .. })
    ));
    let err = LiveSession::new(
        &capture(2, 2),
        &Settings::default(),
        &LiveSettings::default(),
    )
    .unwrap_err();
    assert!(matches!(
        err,
        SettingsError::LiveChannel {
            channel: 2,
            channels: 2
        }
    ));
    assert!(live.frame().is_none(), "no whole segment was accepted");
}

/// Before the ring is full, a recording holds everything captured so far.
#[test]
fn a_recording_before_the_ring_fills_holds_what_was_captured() {
    let live_settings = LiveSettings {
        record_s: 2.0,
        ..LiveSettings::default()
    };
    let mut live = LiveSession::new(&capture(2, 1), &Settings::default(), &live_settings).unwrap();
    let signal = listen(&mut live, 1.0, 0.5, 10);
    let pushed = signal.len() / BLOCK_FRAMES * BLOCK_FRAMES;
    let bytes = live.recording(2.0, WavEncoding::Float32).unwrap();
    let source = open(Cursor::new(bytes), "rec.wav", &InputOptions::default()).unwrap();
    assert_eq!(source.info().declared_frames, Some(pushed as u64));
}
