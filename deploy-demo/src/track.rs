//! The invented path of the demo's plasma parcel: it cools at constant pressure, with 1/T rising
//! linearly from step to step. Only +, -, * and / are used (each correctly rounded by IEEE 754),
//! so every machine computes the same temperatures and densities bit for bit.

use crate::error::JobError;

/// Most steps a job may take.
pub(crate) const MAX_STEPS: usize = 1_000_000;

/// A cooling track: temperature (K) from `t_start_k` to `t_end_k` over `steps` steps, electron
/// density (cm^-3) rising so that n_e T stays at its starting value (isobaric cooling).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct CoolingTrack {
    t_start_k: f64,
    t_end_k: f64,
    ne_start_cm3: f64,
    steps: usize,
}

fn check_positive(field: &'static str, value: f64, unit: &str) -> Result<(), JobError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(JobError::argument(
            field,
            format!("{value} {unit}"),
            "must be finite and > 0",
        ))
    }
}

impl CoolingTrack {
    /// A track; temperatures and the density must be finite and > 0, the track must cool
    /// (`t_end_k < t_start_k`), and `steps` within [2, MAX_STEPS].
    pub(crate) fn new(
        t_start_k: f64,
        t_end_k: f64,
        ne_start_cm3: f64,
        steps: usize,
    ) -> Result<Self, JobError> {
        check_positive("t-start-k", t_start_k, "K")?;
        check_positive("t-end-k", t_end_k, "K")?;
        check_positive("ne-start-cm3", ne_start_cm3, "cm^-3")?;
        if t_end_k >= t_start_k {
            return Err(JobError::argument(
                "t-end-k",
                format!("{t_end_k} K"),
                format!("must be below t-start-k = {t_start_k} K (the parcel cools)"),
            ));
        }
        if !(2..=MAX_STEPS).contains(&steps) {
            return Err(JobError::argument(
                "steps",
                steps,
                format!("must be within [2, {MAX_STEPS}]"),
            ));
        }
        Ok(Self {
            t_start_k,
            t_end_k,
            ne_start_cm3,
            steps,
        })
    }

    /// Checks that the whole track lies within [t_min_k, t_max_k] (a table grid), naming the
    /// end that does not.
    pub(crate) fn check_within(&self, t_min_k: f64, t_max_k: f64, what: &str) -> Result<(), JobError> {
        for (field, t_k) in [("t-start-k", self.t_start_k), ("t-end-k", self.t_end_k)] {
            if !(t_min_k..=t_max_k).contains(&t_k) {
                return Err(JobError::argument(
                    field,
                    format!("{t_k} K"),
                    format!("must be within the table grid of {what}, [{t_min_k}, {t_max_k}] K"),
                ));
            }
        }
        Ok(())
    }

    /// Number of steps.
    pub(crate) fn steps(&self) -> usize {
        self.steps
    }

    /// Electron temperature at `step` (0-based), K: 1/T moves linearly from 1/t_start to 1/t_end.
    pub(crate) fn temperature_k(&self, step: usize) -> f64 {
        let last = self.steps - 1;
        if step == 0 {
            return self.t_start_k;
        }
        if step >= last {
            return self.t_end_k;
        }
        let fraction = step as f64 / last as f64;
        let inv_start = 1.0 / self.t_start_k;
        let inv_end = 1.0 / self.t_end_k;
        1.0 / (inv_start + fraction * (inv_end - inv_start))
    }

    /// Electron density at `step`, cm^-3: n_e T held at its starting value.
    pub(crate) fn density_cm3(&self, step: usize) -> f64 {
        self.ne_start_cm3 * (self.t_start_k / self.temperature_k(step))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn track() -> CoolingTrack {
        CoolingTrack::new(2.0e5, 5.0e3, 1.0e8, 1001).unwrap()
    }

    // The track's defining properties (common practice, no source): it starts and ends at the
    // temperatures asked for, cools monotonically, and keeps n_e T constant (isobaric) to a few
    // rounding errors.
    #[test]
    fn the_track_cools_isobarically_between_its_end_points() {
        let t = track();
        assert_eq!(t.temperature_k(0), 2.0e5);
        assert_eq!(t.temperature_k(1000), 5.0e3);
        assert_eq!(t.density_cm3(0), 1.0e8);
        let p0 = 2.0e5 * 1.0e8;
        for step in 1..=1000 {
            assert!(t.temperature_k(step) < t.temperature_k(step - 1), "step {step}");
            let p = t.temperature_k(step) * t.density_cm3(step);
            assert!((p / p0 - 1.0).abs() < 4.0 * f64::EPSILON, "step {step}: {p}");
        }
        // 1/T is linear in the step: the midpoint is the harmonic mean of the end points.
        let harmonic_mean_k = 2.0 / (1.0 / 2.0e5 + 1.0 / 5.0e3);
        assert!((t.temperature_k(500) / harmonic_mean_k - 1.0).abs() < 4.0 * f64::EPSILON);
    }

    #[test]
    fn bad_tracks_are_refused_with_field_value_and_range() {
        let e = CoolingTrack::new(2.0e5, 5.0e3, 1.0e8, 1).unwrap_err().to_string();
        assert_eq!(e, "steps = 1: must be within [2, 1000000]");
        let e = CoolingTrack::new(-1.0, 5.0e3, 1.0e8, 10).unwrap_err().to_string();
        assert_eq!(e, "t-start-k = -1 K: must be finite and > 0");
        let e = CoolingTrack::new(2.0e5, f64::NAN, 1.0e8, 10)
            .unwrap_err()
            .to_string();
        assert_eq!(e, "t-end-k = NaN K: must be finite and > 0");
        let e = CoolingTrack::new(2.0e5, 3.0e5, 1.0e8, 10)
            .unwrap_err()
            .to_string();
        assert_eq!(
            e,
            "t-end-k = 300000 K: must be below t-start-k = 200000 K (the parcel cools)"
        );
        let e = CoolingTrack::new(2.0e5, 5.0e3, 0.0, 10).unwrap_err().to_string();
        assert_eq!(e, "ne-start-cm3 = 0 cm^-3: must be finite and > 0");
        let t = CoolingTrack::new(2.0e5, 5.0e3, 1.0e8, 10).unwrap();
        assert!(t.check_within(10.0, 1.0e9, "X").is_ok());
        let e = t.check_within(1.0e4, 1.0e9, "X").unwrap_err().to_string();
        assert_eq!(
            e,
            "t-end-k = 5000 K: must be within the table grid of X, [10000, 1000000000] K"
        );
    }
}
