//! Equivalent continuous level (Leq): the energy mean of per-segment powers over a session and
//! over the last N seconds, in bounded memory.
//!
//! # Method
//! The time-average level over an interval T is
//! L_eq,T = 10·lg[(1/T)·∫_T p²(t)/p₀² dt].
//! A live analysis delivers one mean square P_i per analysis segment (already weighted, in
//! unit²). Consecutive segments advance by the hop h, so segment i stands for h seconds of the
//! timeline (overlapping segments each count for their hop, and in steady state every sample
//! then counts equally). The integral becomes Σ P_i·h, T = n·h, and
//! L_eq = 10·lg[(Σ_i P_i·h)/(n·h)/P₀] = 10·lg[mean(P_i)/P₀]: with equal durations the
//! duration-weighted energy mean is the plain mean of the powers.
//!
//! - Session: a compensated running sum of all P_i (Neumaier), so rounding does not grow with
//!   the session's length.
//! - Recent window of N seconds: a ring of ⌈N/h⌉ (time, power) pairs allocated once; a segment
//!   at time t_i belongs to the window ending at the latest time t while t_i > t − N (with a
//!   slack of 10⁻⁶ hop for rounding in the caller's times). Its mean is recomputed from the ring
//!   on demand, so nothing drifts.
//! - Missing segments (a gap in the times) are left out of both averages, not filled in; the
//!   averaged duration is then shorter than the elapsed time ([`LevelHistory::duration_s`],
//!   [`LevelHistory::recent_duration_s`]).
//!
//! # References
//! - IEC 61672-1:2013, clause 3.9, time-average sound level (clause number from memory).

use super::levels::LevelReference;
use super::AcousticsError;

/// Largest ring of the recent window, in segments (8 MiB of (time, power) pairs): a window of
/// one hour at a 6.9 ms hop (a bound chosen here; see [`LevelHistory::new`]).
pub const MAX_RECENT_SEGMENTS: usize = 1 << 19;
/// Fraction of a hop below which two times count as equal, for rounding in times that the
/// caller computes as index × hop (common practice).
const TIME_SLACK_FRAC: f64 = 1e-6;

/// Per-segment powers of a session: session Leq, recent Leq, extremes and count.
#[derive(Debug, Clone)]
pub struct LevelHistory {
    hop_s: f64,
    recent_window_s: f64,
    reference: LevelReference,
    segments: u64,
    power_sum: f64,
    power_compensation: f64,
    max_power: f64,
    min_power: f64,
    latest_time_s: Option<f64>,
    ring: Box<[(f64, f64)]>,
    ring_start: usize,
    ring_len: usize,
}

impl LevelHistory {
    /// An empty history for segments `hop_s` apart, with a recent window of `recent_window_s`.
    ///
    /// # Method
    /// Allocates a ring of ⌈N/h⌉ segments (at least one) once; it never grows.
    ///
    /// # Units
    /// Seconds; `reference.power` in unit².
    ///
    /// # Errors
    /// [`AcousticsError::Duration`] unless both durations are finite and > 0;
    /// [`AcousticsError::RecentWindowTooLong`] if the ring would exceed [`MAX_RECENT_SEGMENTS`];
    /// [`AcousticsError::ReferencePower`] unless P₀ is finite and > 0.
    ///
    /// ```
    /// use noisesonde::acoustics::{LevelHistory, LevelReference};
    /// let mut history = LevelHistory::new(0.5, 2.0, LevelReference::for_unit("Pa"))?;
    /// // 1 Pa² for one second, then 10 Pa² for one second (93.98 and 103.98 dB SPL).
    /// for (i, power) in [1.0, 1.0, 10.0, 10.0].into_iter().enumerate() {
    ///     history.push(0.5 * (i + 1) as f64, power)?;
    /// }
    /// // Energy mean 5.5 Pa²: 10·lg(5.5 / 4e-10) = 101.383 dB.
    /// let leq = history.session_leq_db().unwrap();
    /// assert!((leq - 10.0 * (5.5f64 / 4e-10).log10()).abs() < 1e-9);
    /// # Ok::<(), noisesonde::acoustics::AcousticsError>(())
    /// ```
    pub fn new(
        hop_s: f64,
        recent_window_s: f64,
        reference: LevelReference,
    ) -> Result<Self, AcousticsError> {
        for (what, seconds) in [("hop", hop_s), ("recent window", recent_window_s)] {
            if !(seconds.is_finite() && seconds > 0.0) {
                return Err(AcousticsError::Duration { what, seconds });
            }
        }
        if !(reference.power.is_finite() && reference.power > 0.0) {
            return Err(AcousticsError::ReferencePower {
                power: reference.power,
            });
        }
        let segments = (recent_window_s / hop_s - TIME_SLACK_FRAC).ceil().max(1.0);
        // Both durations are finite and > 0, so the ratio is never NaN (it may be +∞).
        if segments > MAX_RECENT_SEGMENTS as f64 {
            return Err(AcousticsError::RecentWindowTooLong {
                recent_window_s,
                hop_s,
                segments,
                max: MAX_RECENT_SEGMENTS,
            });
        }
        // `segments` is a whole number in [1, MAX_RECENT_SEGMENTS], so the cast is exact.
        let capacity = segments as usize;
        Ok(Self {
            hop_s,
            recent_window_s,
            reference,
            segments: 0,
            power_sum: 0.0,
            power_compensation: 0.0,
            max_power: f64::NEG_INFINITY,
            min_power: f64::INFINITY,
            latest_time_s: None,
            ring: vec![(0.0, 0.0); capacity].into_boxed_slice(),
            ring_start: 0,
            ring_len: 0,
        })
    }

    /// Adds the mean square `mean_square_power` (unit², already weighted) of the segment
    /// ending at `time_s`.
    ///
    /// # Errors
    /// [`AcousticsError::Time`] for a non-finite time; [`AcousticsError::TimeNotAdvancing`]
    /// unless the time is at least one hop after the previous one (less 10⁻⁶ hop);
    /// [`AcousticsError::Power`] for a negative or non-finite power. The history is unchanged
    /// after an error.
    pub fn push(&mut self, time_s: f64, mean_square_power: f64) -> Result<(), AcousticsError> {
        if !time_s.is_finite() {
            return Err(AcousticsError::Time { time_s });
        }
        if let Some(previous_s) = self.latest_time_s {
            if time_s < previous_s + self.hop_s * (1.0 - TIME_SLACK_FRAC) {
                return Err(AcousticsError::TimeNotAdvancing {
                    time_s,
                    previous_s,
                    hop_s: self.hop_s,
                });
            }
        }
        if !(mean_square_power.is_finite() && mean_square_power >= 0.0) {
            return Err(AcousticsError::Power {
                time_s,
                power: mean_square_power,
            });
        }
        self.latest_time_s = Some(time_s);
        self.segments += 1;
        self.add_to_session_sum(mean_square_power);
        self.max_power = self.max_power.max(mean_square_power);
        self.min_power = self.min_power.min(mean_square_power);

        let capacity = self.ring.len();
        if self.ring_len == capacity {
            self.ring_start = (self.ring_start + 1) % capacity;
            self.ring_len -= 1;
        }
        self.ring[(self.ring_start + self.ring_len) % capacity] = (time_s, mean_square_power);
        self.ring_len += 1;
        let oldest_kept_after_s = time_s - self.recent_window_s + self.hop_s * TIME_SLACK_FRAC;
        while self.ring_len > 0 && self.ring[self.ring_start].0 <= oldest_kept_after_s {
            self.ring_start = (self.ring_start + 1) % capacity;
            self.ring_len -= 1;
        }
        Ok(())
    }

    /// Neumaier's compensated addition (Neumaier 1974, from memory) of one power to the sum.
    fn add_to_session_sum(&mut self, power: f64) {
        let sum = self.power_sum + power;
        if self.power_sum.abs() >= power.abs() {
            self.power_compensation += (self.power_sum - sum) + power;
        } else {
            self.power_compensation += (power - sum) + self.power_sum;
        }
        self.power_sum = sum;
    }

    /// Forgets every segment; the ring keeps its allocation.
    pub fn clear(&mut self) {
        self.segments = 0;
        self.power_sum = 0.0;
        self.power_compensation = 0.0;
        self.max_power = f64::NEG_INFINITY;
        self.min_power = f64::INFINITY;
        self.latest_time_s = None;
        self.ring_start = 0;
        self.ring_len = 0;
    }

    /// Segments pushed since the start (or the last [`clear`](Self::clear)).
    pub fn segments(&self) -> u64 {
        self.segments
    }

    /// Duration the session average covers, segments × hop, s.
    pub fn duration_s(&self) -> f64 {
        self.segments as f64 * self.hop_s
    }

    /// Segments in the recent window (at most [`capacity`](Self::capacity)).
    pub fn recent_segments(&self) -> usize {
        self.ring_len
    }

    /// Duration the recent average covers, recent segments × hop, s (at most the window).
    pub fn recent_duration_s(&self) -> f64 {
        self.ring_len as f64 * self.hop_s
    }

    /// Segments the recent window can hold, ⌈N/h⌉: fixed at construction.
    pub fn capacity(&self) -> usize {
        self.ring.len()
    }

    /// The reference power of the levels.
    pub fn reference(&self) -> &LevelReference {
        &self.reference
    }

    /// Energy mean of every segment's power, unit²; `None` before the first segment.
    pub fn session_power(&self) -> Option<f64> {
        (self.segments > 0)
            .then(|| (self.power_sum + self.power_compensation) / self.segments as f64)
    }

    /// Leq of the session, 10·lg(mean P_i / P₀) dB; `None` before the first segment.
    pub fn session_leq_db(&self) -> Option<f64> {
        self.session_power().map(|p| self.reference.level_db(p))
    }

    /// Energy mean of the powers in the recent window, unit²; `None` before the first segment.
    pub fn recent_power(&self) -> Option<f64> {
        if self.ring_len == 0 {
            return None;
        }
        let capacity = self.ring.len();
        let sum: f64 = (0..self.ring_len)
            .map(|i| self.ring[(self.ring_start + i) % capacity].1)
            .sum();
        Some(sum / self.ring_len as f64)
    }

    /// Leq of the recent window, dB; `None` before the first segment. While the session is
    /// shorter than the window, this is the Leq of the session so far.
    pub fn recent_leq_db(&self) -> Option<f64> {
        self.recent_power().map(|p| self.reference.level_db(p))
    }

    /// Highest per-segment level of the session, dB; `None` before the first segment.
    pub fn max_level_db(&self) -> Option<f64> {
        (self.segments > 0).then(|| self.reference.level_db(self.max_power))
    }

    /// Lowest per-segment level of the session, dB (−∞ for a silent segment); `None` before
    /// the first segment.
    pub fn min_level_db(&self) -> Option<f64> {
        (self.segments > 0).then(|| self.reference.level_db(self.min_power))
    }
}
