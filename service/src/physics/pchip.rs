//! Shape-preserving piecewise-cubic Hermite interpolation (PCHIP): Fritsch & Carlson (1980,
//! SIAM J. Numer. Anal. 17, 238) monotone cubic, with the weighted harmonic-mean interior
//! slopes of Fritsch & Butland (1984) and the three-point end slopes limited as in Moler,
//! Numerical Computing with MATLAB (2004), sec. 3.4 (the same rule as scipy's
//! `PchipInterpolator`, which the tests compare against). Each interval is monotone, so the
//! interpolant never leaves the range of its two end values: no overshoot, and positive data
//! give a positive interpolant.

use super::elementary::exp;
use super::error::{PhysicsError, require_same_len};

/// A PCHIP interpolant through points (x_i, y_i) with strictly increasing x.
#[derive(Debug, Clone, PartialEq)]
pub struct Pchip {
    x: Vec<f64>,
    y: Vec<f64>,
    slopes: Vec<f64>,
}

impl Pchip {
    /// Build the interpolant; `x` finite and strictly increasing, `y` finite, same length >= 1.
    /// One point gives a constant.
    pub fn new(x: &[f64], y: &[f64]) -> Result<Self, PhysicsError> {
        require_same_len("x", x.len(), "y", y.len())?;
        if x.is_empty() {
            return Err(PhysicsError::TooFewPoints {
                field: "x",
                len: 0,
                min: 1,
            });
        }
        for (i, &v) in x.iter().enumerate() {
            if !v.is_finite() {
                return Err(PhysicsError::OutOfRange {
                    field: format!("x[{i}]"),
                    value: v,
                    unit: "",
                    allowed: "finite",
                });
            }
        }
        for i in 1..x.len() {
            if x[i] <= x[i - 1] {
                return Err(PhysicsError::NotIncreasing {
                    field: format!("x[{i}]"),
                    value: x[i],
                    previous: x[i - 1],
                    unit: "",
                });
            }
        }
        for (i, &v) in y.iter().enumerate() {
            if !v.is_finite() {
                return Err(PhysicsError::OutOfRange {
                    field: format!("y[{i}]"),
                    value: v,
                    unit: "",
                    allowed: "finite",
                });
            }
        }
        Ok(Self {
            x: x.to_vec(),
            y: y.to_vec(),
            slopes: slopes(x, y),
        })
    }

    /// The first and last abscissa.
    pub fn x_range(&self) -> (f64, f64) {
        (self.x[0], self.x[self.x.len() - 1])
    }

    /// The node slopes at the first and last point.
    pub fn end_slopes(&self) -> (f64, f64) {
        (self.slopes[0], self.slopes[self.slopes.len() - 1])
    }

    /// The interpolant at `x`; outside the data range a positive end value is continued as
    /// y_end exp((m_end / y_end)(x - x_end)), which matches the end value and slope (so the
    /// curve stays continuously differentiable, with no kink for a table to smooth over) and
    /// stays positive; a non-positive end value is held constant. NaN in, NaN out.
    pub fn evaluate_continued(&self, x: f64) -> f64 {
        let n = self.x.len();
        let end = if x < self.x[0] {
            0
        } else if x > self.x[n - 1] {
            n - 1
        } else {
            return self.evaluate(x);
        };
        let (y_end, m_end) = (self.y[end], self.slopes[end]);
        if y_end > 0.0 {
            y_end * exp((m_end / y_end) * (x - self.x[end]))
        } else {
            y_end
        }
    }

    /// The interpolant at `x`; outside the data range it returns the nearest end value
    /// (constant extrapolation). NaN in, NaN out.
    pub fn evaluate(&self, x: f64) -> f64 {
        let n = self.x.len();
        if x.is_nan() {
            return f64::NAN;
        }
        if n == 1 || x <= self.x[0] {
            return self.y[0];
        }
        if x >= self.x[n - 1] {
            return self.y[n - 1];
        }
        let k = self.x.partition_point(|&v| v <= x) - 1;
        let h = self.x[k + 1] - self.x[k];
        let t = (x - self.x[k]) / h;
        let one_minus = 1.0 - t;
        let h00 = (1.0 + 2.0 * t) * one_minus * one_minus;
        let h10 = t * one_minus * one_minus;
        let h01 = t * t * (3.0 - 2.0 * t);
        let h11 = -t * t * one_minus;
        h00 * self.y[k] + h10 * h * self.slopes[k] + h01 * self.y[k + 1] + h11 * h * self.slopes[k + 1]
    }
}

/// Node slopes: weighted harmonic mean inside, limited three-point formula at the ends.
fn slopes(x: &[f64], y: &[f64]) -> Vec<f64> {
    let n = x.len();
    if n == 1 {
        return vec![0.0];
    }
    let h: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();
    let m: Vec<f64> = (0..n - 1).map(|k| (y[k + 1] - y[k]) / h[k]).collect();
    if n == 2 {
        return vec![m[0], m[0]];
    }
    let mut d = vec![0.0; n];
    for k in 1..n - 1 {
        let (m0, m1) = (m[k - 1], m[k]);
        if m0 == 0.0 || m1 == 0.0 || (m0 > 0.0) != (m1 > 0.0) {
            d[k] = 0.0;
        } else {
            let w1 = 2.0 * h[k] + h[k - 1];
            let w2 = h[k] + 2.0 * h[k - 1];
            d[k] = (w1 + w2) / (w1 / m0 + w2 / m1);
        }
    }
    d[0] = end_slope(h[0], h[1], m[0], m[1]);
    d[n - 1] = end_slope(h[n - 2], h[n - 3], m[n - 2], m[n - 3]);
    d
}

/// Non-centred three-point end slope, set to 0 if its sign differs from the first secant and
/// capped at 3 times that secant when the secants change sign.
fn end_slope(h0: f64, h1: f64, m0: f64, m1: f64) -> f64 {
    let d = ((2.0 * h0 + h1) * m0 - h0 * m1) / (h0 + h1);
    if d.signum() != m0.signum() || m0 == 0.0 || d == 0.0 {
        0.0
    } else if (m0.signum() != m1.signum() || m1 == 0.0) && d.abs() > 3.0 * m0.abs() {
        3.0 * m0
    } else {
        d
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rejects_unordered_abscissae() {
        // common practice, no source
        let err = Pchip::new(&[-1.0, 0.5, 0.5], &[1.0, 2.0, 3.0]).unwrap_err();
        assert_eq!(
            err.to_string(),
            "x[2] = 0.5: must be > the previous value 0.5 (strictly increasing)"
        );
    }

    #[test]
    fn reproduces_nodes_and_stays_monotone() {
        // Fritsch & Carlson 1980: monotone data give a monotone interpolant through the nodes
        let x = [0.0, 1.0, 2.0, 5.0, 6.0];
        let y = [0.0, 0.1, 3.0, 3.1, 10.0];
        let p = Pchip::new(&x, &y).unwrap();
        for (xi, yi) in x.iter().zip(&y) {
            assert_eq!(p.evaluate(*xi), *yi);
        }
        let mut prev = p.evaluate(0.0);
        for i in 1..=600 {
            let v = p.evaluate(f64::from(i) * 0.01);
            assert!(v >= prev - 1e-15, "not monotone at {i}");
            prev = v;
        }
    }
}
