//! Deterministic test noise: xorshift64* uniforms (Vigna 2016, "An experimental exploration of
//! Marsaglia's xorshift generators, scrambled", ACM TOMS 42(4)) and Box–Muller normals
//! (Box & Muller 1958). Written here so tests do not depend on a random crate's stream.
#![allow(dead_code)]

pub struct Noise {
    state: u64,
    spare: Option<f64>,
}

impl Noise {
    pub fn new(seed: u64) -> Self {
        Self {
            state: seed.max(1),
            spare: None,
        }
    }

    /// Uniform on (0, 1).
    pub fn uniform(&mut self) -> f64 {
        self.state ^= self.state >> 12;
        self.state ^= self.state << 25;
        self.state ^= self.state >> 27;
        let bits = self.state.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11;
        (bits as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// Standard normal.
    pub fn normal(&mut self) -> f64 {
        if let Some(z) = self.spare.take() {
            return z;
        }
        let r = (-2.0 * self.uniform().ln()).sqrt();
        let theta = 2.0 * std::f64::consts::PI * self.uniform();
        self.spare = Some(r * theta.sin());
        r * theta.cos()
    }

    pub fn normals(&mut self, n: usize) -> Vec<f64> {
        (0..n).map(|_| self.normal()).collect()
    }

    /// AR(1): x[n] = φ x[n−1] + e[n], e ~ N(0, σe²), started from its stationary distribution.
    pub fn ar1(&mut self, n: usize, phi: f64, sigma_e: f64) -> Vec<f64> {
        let mut x = self.normal() * sigma_e / (1.0 - phi * phi).sqrt();
        (0..n)
            .map(|_| {
                x = phi * x + sigma_e * self.normal();
                x
            })
            .collect()
    }
}
