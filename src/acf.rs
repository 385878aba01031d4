//! Autocorrelation and autocovariance up to a maximum lag, computed while samples stream in.
//!
//! # Method
//! Block correlation by FFT (overlap-add in the lag domain): the record is cut into blocks of
//! B ≥ L + 1 samples; with A_j the 2B-point DFT of block j zero-padded, the DFT of block j
//! followed by block j+1 is A_j + (−1)^m A_{j+1} (a shift by B is a factor e^{−iπm}), so
//! Σ_j conj(A_j)·(A_j + (−1)^m A_{j+1}) is the DFT of Σ_n y[n] y[n+k] for 0 ≤ k < B, without
//! circular wrap (Oppenheim & Schafer, *Discrete-Time Signal Processing*, 3rd ed. 2010, §8.7
//! on linear convolution by the DFT and §10.3 on block processing; from memory). The sum is
//! accumulated in the frequency domain and inverted once, so each sample costs one forward
//! 2B-point real FFT per B samples: O(N log L) time and O(L) memory.
//!
//! Samples are shifted by an offset c (the mean of the first block) before the products for
//! numerical stability; head and tail sums of the first and last L samples restore the exact
//! lagged sums of both x and x − mean:
//! Σ_{n<N−k} (x[n]−μ)(x[n+k]−μ) = S_yy[k] − d(S_y − T_k) − d(S_y − H_k) + (N−k)d², d = μ − c,
//! with H_k, T_k the sums of the first and last k shifted samples.
//!
//! Estimators (Bendat & Piersol, *Random Data*, 4th ed. 2010, §11.4.1, eqs. 11.98/11.99 from
//! memory; Box & Jenkins 1976, §2.1.5): biased R[k] = (1/N) Σ x[n]x[n+k] (R[0] is the mean
//! square, the total power), unbiased (1/(N−k)) Σ …; the autocovariance C[k] removes the
//! record's mean first (C[0] is the variance).

use std::fmt;
use std::str::FromStr;
use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use serde::{Deserialize, Serialize};

use crate::error::SettingsError;
use crate::numeric::sum_in_lanes;

/// Smallest block length, so that short lags still get efficient FFTs.
const MIN_BLOCK_LEN: usize = 4096;
/// Largest lag in samples accepted (2^20); the memory is about 80 bytes per lag.
pub const MAX_LAG_LEN: usize = 1 << 20;

/// Normalisation of the lagged sums.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum AcfEstimator {
    /// Divide by N: positive semi-definite, R[0] = mean square (default).
    #[default]
    Biased,
    /// Divide by N − k: unbiased at each lag, noisier at long lags.
    Unbiased,
}

impl fmt::Display for AcfEstimator {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Self::Biased => "biased",
            Self::Unbiased => "unbiased",
        })
    }
}

impl FromStr for AcfEstimator {
    type Err = SettingsError;
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        match text.trim().to_ascii_lowercase().as_str() {
            "biased" => Ok(Self::Biased),
            "unbiased" => Ok(Self::Unbiased),
            _ => Err(SettingsError::UnknownChoice {
                what: "autocorrelation estimator",
                text: text.to_string(),
                choices: "biased unbiased",
            }),
        }
    }
}

/// Precomputed FFTs for one maximum lag.
#[derive(Clone)]
pub struct AcfPlan {
    max_lag_len: usize,
    block_len: usize,
    forward: Arc<dyn RealToComplex<f64>>,
    inverse: Arc<dyn ComplexToReal<f64>>,
}

impl fmt::Debug for AcfPlan {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("AcfPlan")
            .field("max_lag_len", &self.max_lag_len)
            .field("block_len", &self.block_len)
            .finish()
    }
}

impl AcfPlan {
    /// A plan for lags 0..=`max_lag_len` samples.
    ///
    /// # Errors
    /// [`SettingsError::MaxLag`] when `max_lag_len` exceeds [`MAX_LAG_LEN`].
    pub fn new(max_lag_len: usize) -> Result<Self, SettingsError> {
        if max_lag_len > MAX_LAG_LEN {
            return Err(SettingsError::MaxLag {
                max_lag_len,
                limit: MAX_LAG_LEN,
            });
        }
        let block_len = (max_lag_len + 1).next_power_of_two().max(MIN_BLOCK_LEN);
        let mut planner = RealFftPlanner::<f64>::new();
        Ok(Self {
            max_lag_len,
            block_len,
            forward: planner.plan_fft_forward(2 * block_len),
            inverse: planner.plan_fft_inverse(2 * block_len),
        })
    }

    /// Largest lag computed, in samples.
    pub fn max_lag_len(&self) -> usize {
        self.max_lag_len
    }
}

/// The streaming correlator.
///
/// ```
/// use noisesonde::acf::{Acf, AcfEstimator, AcfPlan};
/// // 3 + (1, −1, 1, −1, …): mean 3, variance 1, mean square 10; the centred sequence
/// // alternates, so C[k] = (−1)^k (N − k)/N with the biased estimator (by hand).
/// let x: Vec<f64> = (0..1000).map(|n| 3.0 + if n % 2 == 0 { 1.0 } else { -1.0 }).collect();
/// let mut acf = Acf::new(AcfPlan::new(4).unwrap());
/// acf.push(&x);
/// let r = acf.finish(AcfEstimator::Biased).unwrap();
/// assert!((r.autocorrelation[0] - 10.0).abs() < 1e-12);
/// assert!((r.autocovariance[1] + 0.999).abs() < 1e-12);
/// assert!((r.autocovariance[4] - 0.996).abs() < 1e-12);
/// ```
#[derive(Clone)]
pub struct Acf {
    plan: AcfPlan,
    /// Block being filled (first B entries), zero padding after.
    block: Vec<f64>,
    filled: usize,
    offset: Option<f64>,
    previous: Vec<Complex<f64>>,
    has_previous: bool,
    current: Vec<Complex<f64>>,
    accumulated: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
    /// First L+1 raw samples.
    head: Vec<f64>,
    /// Last L+1 raw samples, as a ring.
    tail: Vec<f64>,
    tail_pos: usize,
    samples: u64,
    /// Σ (x − c) over the processed blocks.
    sum_shifted: f64,
}

impl fmt::Debug for Acf {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Acf")
            .field("plan", &self.plan)
            .field("samples", &self.samples)
            .finish()
    }
}

/// Lagged sums turned into estimates, in the squared units of the samples.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AcfResult {
    /// Lags 0..=L in samples.
    pub lag_len: Vec<usize>,
    /// R[k] of the raw samples (no mean removal).
    pub autocorrelation: Vec<f64>,
    /// C[k] of the samples with the record's mean removed.
    pub autocovariance: Vec<f64>,
    /// C[k]/C[0]; all zero when the variance is zero.
    pub coefficient: Vec<f64>,
    /// The normalisation used.
    pub estimator: AcfEstimator,
}

impl Acf {
    /// A fresh correlator for `plan`.
    pub fn new(plan: AcfPlan) -> Self {
        let b = plan.block_len;
        let lags = plan.max_lag_len + 1;
        Self {
            block: vec![0.0; 2 * b],
            filled: 0,
            offset: None,
            previous: plan.forward.make_output_vec(),
            has_previous: false,
            current: plan.forward.make_output_vec(),
            accumulated: plan.forward.make_output_vec(),
            scratch: vec![
                Complex::default();
                plan.forward
                    .get_scratch_len()
                    .max(plan.inverse.get_scratch_len())
            ],
            head: Vec::with_capacity(lags),
            tail: vec![0.0; lags],
            tail_pos: 0,
            samples: 0,
            sum_shifted: 0.0,
            plan,
        }
    }

    /// The plan in use.
    pub fn plan(&self) -> &AcfPlan {
        &self.plan
    }

    /// Samples pushed so far.
    pub fn samples(&self) -> u64 {
        self.samples
    }

    /// Feeds samples. Allocates nothing.
    pub fn push(&mut self, mut samples: &[f64]) {
        let lags = self.plan.max_lag_len + 1;
        let head_room = lags - self.head.len();
        self.head
            .extend_from_slice(&samples[..head_room.min(samples.len())]);
        // Only the last L+1 samples of a block can still be among the record's last L+1.
        for &x in &samples[samples.len().saturating_sub(lags)..] {
            self.tail[self.tail_pos] = x;
            self.tail_pos = if self.tail_pos + 1 == lags {
                0
            } else {
                self.tail_pos + 1
            };
        }
        self.samples += samples.len() as u64;
        let b = self.plan.block_len;
        while !samples.is_empty() {
            let take = (b - self.filled).min(samples.len());
            self.block[self.filled..self.filled + take].copy_from_slice(&samples[..take]);
            self.filled += take;
            samples = &samples[take..];
            if self.filled == b {
                self.process_block();
            }
        }
    }

    fn process_block(&mut self) {
        let filled = self.filled;
        let offset = *self
            .offset
            .get_or_insert_with(|| self.block[..filled].iter().sum::<f64>() / filled.max(1) as f64);
        for y in &mut self.block[..filled] {
            *y -= offset;
        }
        self.block[filled..].fill(0.0);
        self.sum_shifted += sum_in_lanes(&self.block[..filled]);
        let done = self.plan.forward.process_with_scratch(
            &mut self.block,
            &mut self.current,
            &mut self.scratch,
        );
        debug_assert!(done.is_ok());
        if self.has_previous {
            accumulate_pair(&mut self.accumulated, &self.previous, &self.current);
        }
        std::mem::swap(&mut self.previous, &mut self.current);
        self.has_previous = true;
        self.filled = 0;
    }

    /// Estimates from the samples so far, or `None` before two samples.
    /// Leaves the correlator untouched, so pushing may continue (live use).
    pub fn finish(&self, estimator: AcfEstimator) -> Option<AcfResult> {
        if self.samples < 2 {
            return None;
        }
        let mut state = self.clone();
        if state.filled > 0 {
            state.process_block();
        }
        if state.has_previous {
            let last = state.previous.clone();
            let zero = vec![Complex::default(); last.len()];
            accumulate_pair(&mut state.accumulated, &last, &zero);
        }
        let two_b = 2 * state.plan.block_len;
        let mut spectrum = state.accumulated;
        // DC and Nyquist of a real sequence's spectrum are real; remove rounding residue.
        if let Some(first) = spectrum.first_mut() {
            first.im = 0.0;
        }
        if let Some(last) = spectrum.last_mut() {
            last.im = 0.0;
        }
        let mut lagged = state.plan.inverse.make_output_vec();
        let done =
            state
                .plan
                .inverse
                .process_with_scratch(&mut spectrum, &mut lagged, &mut state.scratch);
        debug_assert!(done.is_ok());

        let n = self.samples;
        let max_lag = (self.plan.max_lag_len as u64).min(n - 1) as usize;
        let offset = state.offset.unwrap_or(0.0);
        let n_f = n as f64;
        let s_y = state.sum_shifted;
        let d = s_y / n_f; // mean − offset
                           // Head sums H_k = Σ_{n<k} y[n], tail sums T_k = Σ of the last k shifted samples.
        let lags = self.plan.max_lag_len + 1;
        let tail_in_order = (0..lags.min(n as usize))
            .map(|i| self.tail[(self.tail_pos + lags - 1 - i) % lags] - offset);
        let mut tail_sums = Vec::with_capacity(max_lag + 1);
        let mut acc = 0.0;
        tail_sums.push(0.0);
        for y in tail_in_order.take(max_lag) {
            acc += y;
            tail_sums.push(acc);
        }
        let mut head_sum = 0.0;
        let mut autocorrelation = Vec::with_capacity(max_lag + 1);
        let mut autocovariance = Vec::with_capacity(max_lag + 1);
        for k in 0..=max_lag {
            if k > 0 {
                head_sum += self.head[k - 1] - offset;
            }
            let s_yy = lagged[k] / two_b as f64;
            let pairs = (n - k as u64) as f64;
            let lead = s_y - tail_sums[k]; // Σ_{n<N−k} y[n]
            let lagging = s_y - head_sum; // Σ_{n≥k} y[n]
            let raw = s_yy + offset * (lead + lagging) + pairs * offset * offset;
            let centred = s_yy - d * (lead + lagging) + pairs * d * d;
            let divisor = match estimator {
                AcfEstimator::Biased => n_f,
                AcfEstimator::Unbiased => pairs,
            };
            autocorrelation.push(raw / divisor);
            autocovariance.push(centred / divisor);
        }
        let c0 = autocovariance[0];
        let coefficient = autocovariance
            .iter()
            .map(|c| if c0 > 0.0 { c / c0 } else { 0.0 })
            .collect();
        Some(AcfResult {
            lag_len: (0..=max_lag).collect(),
            autocorrelation,
            autocovariance,
            coefficient,
            estimator,
        })
    }
}

/// acc[m] += conj(a[m]) · (a[m] + (−1)^m b[m]).
fn accumulate_pair(acc: &mut [Complex<f64>], a: &[Complex<f64>], b: &[Complex<f64>]) {
    for (m, ((s, &x), &y)) in acc.iter_mut().zip(a).zip(b).enumerate() {
        let shifted = if m % 2 == 0 { y } else { -y };
        *s += x.conj() * (x + shifted);
    }
}
