//! Estimators with standard errors, as mergeable accumulators (DESIGN §8).

use serde::Serialize;

/// Running mean and variance of a sample (Welford's update; two accumulators merge exactly in
/// the sense of Chan et al.'s pairwise formula, so the order of merging is the only source of
/// rounding differences — merge in a fixed order for reproducible results).
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct Moments {
    /// Number of observations.
    pub n: u64,
    mean: f64,
    m2: f64,
}

impl Moments {
    /// An empty accumulator.
    pub fn new() -> Self {
        Self::default()
    }

    /// Add one observation.
    pub fn push(&mut self, x: f64) {
        self.n += 1;
        let d = x - self.mean;
        self.mean += d / self.n as f64;
        self.m2 += d * (x - self.mean);
    }

    /// Combine with another accumulator.
    pub fn merge(&mut self, other: &Moments) {
        if other.n == 0 {
            return;
        }
        if self.n == 0 {
            *self = *other;
            return;
        }
        let n = self.n + other.n;
        let d = other.mean - self.mean;
        self.mean += d * other.n as f64 / n as f64;
        self.m2 += other.m2 + d * d * (self.n as f64 * other.n as f64 / n as f64);
        self.n = n;
    }

    /// Sample mean (NaN when empty).
    pub fn mean(&self) -> f64 {
        if self.n == 0 {
            f64::NAN
        } else {
            self.mean
        }
    }

    /// Unbiased sample variance (NaN for fewer than two observations).
    pub fn variance(&self) -> f64 {
        if self.n < 2 {
            f64::NAN
        } else {
            self.m2 / (self.n - 1) as f64
        }
    }

    /// Standard error of the mean, `√(variance / n)`.
    pub fn std_error(&self) -> f64 {
        (self.variance() / self.n as f64).sqrt()
    }
}

impl FromIterator<f64> for Moments {
    fn from_iter<I: IntoIterator<Item = f64>>(iter: I) -> Self {
        let mut m = Moments::new();
        for x in iter {
            m.push(x);
        }
        m
    }
}

/// Least-squares slope of `log y` against `log x` (an observed convergence order or scaling
/// exponent); NaN when fewer than two usable points.
pub fn log_log_slope(points: &[(f64, f64)]) -> f64 {
    let pts: Vec<(f64, f64)> = points
        .iter()
        .filter(|(x, y)| *x > 0.0 && *y > 0.0 && x.is_finite() && y.is_finite())
        .map(|(x, y)| (x.ln(), y.ln()))
        .collect();
    if pts.len() < 2 {
        return f64::NAN;
    }
    let n = pts.len() as f64;
    let mx = pts.iter().map(|p| p.0).sum::<f64>() / n;
    let my = pts.iter().map(|p| p.1).sum::<f64>() / n;
    let sxy: f64 = pts.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    let sxx: f64 = pts.iter().map(|p| (p.0 - mx) * (p.0 - mx)).sum();
    sxy / sxx
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn merge_equals_single_pass() {
        let xs: Vec<f64> = (0..100)
            .map(|i| ((i * 37) % 11) as f64 * 0.3 - 1.0)
            .collect();
        let all: Moments = xs.iter().copied().collect();
        let mut a: Moments = xs[..40].iter().copied().collect();
        let b: Moments = xs[40..].iter().copied().collect();
        a.merge(&b);
        assert_eq!(a.n, all.n);
        assert!((a.mean() - all.mean()).abs() < 1e-14);
        assert!((a.variance() - all.variance()).abs() < 1e-13);
    }

    #[test]
    fn slope_of_power_law() {
        let pts: Vec<(f64, f64)> = (1..6)
            .map(|k| (k as f64, 3.0 * (k as f64).powf(-1.5)))
            .collect();
        assert!((log_log_slope(&pts) + 1.5).abs() < 1e-12);
    }
}
