//! Errors of the pipeline. Every variant names the values involved and, where one exists, the fix.

/// Settings that cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SettingsError {
    #[error("segment length {segment_len} is out of range: use {min} to {max} samples")]
    SegmentLength {
        segment_len: usize,
        min: usize,
        max: usize,
    },
    #[error("overlap {overlap_frac} is out of range: use a fraction from 0 up to (not including) 1, e.g. 0.5")]
    Overlap { overlap_frac: f64 },
    #[error("window {window} has zero sum and cannot be used")]
    DegenerateWindow { window: String },
    #[error("maximum lag of {max_lag_len} samples exceeds the limit of {limit}: choose a shorter --max-lag-s")]
    MaxLag { max_lag_len: usize, limit: usize },
    #[error("maximum lag {max_lag_s} s is invalid: use a finite number of seconds ≥ 0")]
    MaxLagSeconds { max_lag_s: f64 },
    #[error("sample rate {sample_rate_hz} Hz is invalid: it must be a finite number above 0")]
    SampleRate { sample_rate_hz: f64 },
    #[error("calibration scale {scale} is invalid: give the physical value of digital full scale, a finite number above 0")]
    Scale { scale: f64 },
    #[error("unit name '{unit}' is invalid: use 1 to 16 printable characters without spaces, e.g. V, Pa, g")]
    Unit { unit: String },
    #[error("confidence level {level} is invalid: use a fraction between 0 and 1, e.g. 0.95")]
    ConfidenceLevel { level: f64 },
    #[error("linear live averaging over {segments} segments of {bins} bins is out of range: use 1 to {max_values} values in all (segments × bins)")]
    LiveSegments {
        segments: usize,
        bins: usize,
        max_values: usize,
    },
    #[error("time constant {time_constant_s} s is invalid: use a finite number of seconds above 0, e.g. 1")]
    TimeConstant { time_constant_s: f64 },
    #[error("{count} band-weight vectors are too many: use at most {max}")]
    BandWeightCount { count: usize, max: usize },
    #[error("band-weight vector {index} has {len} values but the spectrum has {bins} bins: give one power gain per bin")]
    BandWeightLength {
        index: usize,
        len: usize,
        bins: usize,
    },
    #[error(
        "band-weight vector {index}, bin {bin}: {value} is not a power gain: use finite values ≥ 0"
    )]
    BandWeightValue {
        index: usize,
        bin: usize,
        value: f64,
    },
    #[error("segment-power queue of {queue_len} segments is out of range: use 1 to {max}")]
    PowerQueueLength { queue_len: usize, max: usize },
    #[error("{segments} stationarity segments is out of range: use {min} to {max} (the record is cut into that many to twice as many segments)")]
    StationaritySegments {
        segments: usize,
        min: usize,
        max: usize,
    },
    #[error(
        "significance {alpha} is invalid: use a probability above 0 and below {max}, e.g. 0.05"
    )]
    Alpha { alpha: f64, max: f64 },
    #[error("{max_lag_len} lags for the stationarity autocorrelation check is out of range: use 1 to {max} samples")]
    StationarityLags { max_lag_len: usize, max: usize },
    #[error("{stretches} stretches for the autocorrelation comparison is out of range: use {min} to {max} (at most the number of segments)")]
    Stretches {
        stretches: usize,
        min: usize,
        max: usize,
    },
    #[error("an ensemble needs at least 2 records, got {records}: ergodicity cannot be tested from one record")]
    TooFewRecords { records: usize },
    #[error("record {record} has a sample rate of {sample_rate_hz} Hz but the first has {first_hz} Hz: an ensemble's records must be sampled alike")]
    SampleRateMismatch {
        record: usize,
        sample_rate_hz: f64,
        first_hz: f64,
    },
    #[error("ensemble lag {lag_len} exceeds the stationarity lags ({max_lag_len} samples): choose lags up to {max_lag_len} or raise --stationarity-lags")]
    EnsembleLag { lag_len: usize, max_lag_len: usize },
    #[error("unknown {what} '{text}': use one of {choices}")]
    UnknownChoice {
        what: &'static str,
        text: String,
        choices: &'static str,
    },
    #[error("input channel {channel} does not exist: the capture has {channels} channel(s), numbered from 0")]
    LiveChannel { channel: usize, channels: usize },
    #[error("live listening cannot start: {problem}")]
    Live { problem: String },
}

/// Problems found in the samples themselves.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum AnalysisError {
    #[error("sample {index} (at {time_s} s) is {value}: the record holds a non-finite value; remove or repair it before analysis")]
    NonFiniteSample { index: u64, time_s: f64, value: f64 },
    #[error("the record has {samples} samples, fewer than one segment of {segment_len}: use a shorter segment, e.g. --segment {suggestion}")]
    TooShort {
        samples: u64,
        segment_len: usize,
        suggestion: usize,
    },
    #[error("record {record}, sample {index} (at {time_s} s) is {value}: the record holds a non-finite value; remove or repair it before analysis")]
    NonFiniteSampleIn {
        record: usize,
        index: u64,
        time_s: f64,
        value: f64,
    },
    #[error("{blocks} blocks were pushed for an ensemble of {records} records: push one block per record")]
    BlockCount { blocks: usize, records: usize },
    #[error("the ensemble's blocks differ in length (record {record} has {len} samples, record 0 has {expected}): push aligned blocks of equal length")]
    UnequalBlocks {
        record: usize,
        len: usize,
        expected: usize,
    },
    #[error("the records have {samples} aligned samples, fewer than the {needed} the ensemble's {segments} segments need: use longer records or fewer --stationarity-segments")]
    EnsembleTooShort {
        samples: u64,
        needed: u64,
        segments: usize,
    },
    #[error("median averaging would store {segments} segments × {bins} bins, more than {max_values} values: use mean averaging, longer segments, or a shorter record")]
    MedianTooLong {
        segments: usize,
        bins: usize,
        max_values: usize,
    },
    #[error("a captured block of {len} samples does not hold {frames} frames × {channels} channels (the session expects {expected_channels} channels)")]
    BlockShape {
        len: usize,
        frames: usize,
        channels: usize,
        expected_channels: usize,
    },
    #[error("no tone near {frequency_hz} Hz stands clearly above the noise: is the calibrator on the microphone and switched on, at that frequency?")]
    NoCalibratorTone { frequency_hz: f64 },
    #[error("live listening: {problem}")]
    Live { problem: String },
}

/// Any failure of the pipeline.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    #[error(transparent)]
    Read(#[from] crate::io::ReadError),
    #[error(transparent)]
    Settings(#[from] SettingsError),
    #[error(transparent)]
    Analysis(#[from] AnalysisError),
}
