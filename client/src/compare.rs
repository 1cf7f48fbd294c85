//! Comparison of two fetched table sets in the caller's process (e.g. the same dataset served
//! by two servers), with the measure the server's Consistency service uses.

use crate::error::ClientError;
use crate::local::LocalTables;
use crate::transition::Transition;
use ratewell_proto::pb;
use ratewell_proto::rule::{OutsidePolicy, RateTable, Side};

/// Largest relative difference of one transition's de-excitation rate coefficient.
#[derive(Debug, Clone, PartialEq)]
pub struct TableDifference {
    /// The transition.
    pub transition: Transition,
    /// max over the compared temperatures of |q2 - q1| / max(|q1|, |q2|).
    pub max_relative_difference: f64,
    /// Temperature where it occurs, K.
    pub at_temperature_k: f64,
}

/// The result of comparing two table sets of one species.
#[derive(Debug, Clone, PartialEq)]
pub struct LocalComparison {
    /// The species.
    pub species: String,
    /// Stamp of the first table set.
    pub first: pb::DatasetStamp,
    /// Stamp of the second table set.
    pub second: pb::DatasetStamp,
    /// One entry per transition present in both, in the first set's order.
    pub differences: Vec<TableDifference>,
    /// Transitions only the first set has.
    pub only_in_first: Vec<Transition>,
    /// Transitions only the second set has.
    pub only_in_second: Vec<Transition>,
    /// Transitions whose weights or transition energy differ, with what differs.
    pub header_mismatches: Vec<String>,
    /// Number of temperatures compared on.
    pub temperature_count: usize,
}

impl LocalComparison {
    /// The largest difference over all transitions (0 when nothing was compared).
    pub fn max_relative_difference(&self) -> f64 {
        self.differences
            .iter()
            .map(|d| d.max_relative_difference)
            .fold(0.0, f64::max)
    }
}

/// Relative difference |b - a| / max(|a|, |b|), 0 when both are 0.
pub fn relative_difference(a: f64, b: f64) -> f64 {
    let scale = a.abs().max(b.abs());
    if scale == 0.0 { 0.0 } else { (b - a).abs() / scale }
}

/// Compares every common transition at the first set's knots and interval midpoints that lie
/// inside both grids.
pub fn compare_tables(first: &LocalTables, second: &LocalTables) -> Result<LocalComparison, ClientError> {
    if first.species() != second.species() {
        return Err(ClientError::invalid(
            "species",
            format!("{:?} and {:?}", first.species(), second.species()),
            "both table sets must be of one species",
        ));
    }
    let g = first.grid();
    let temperatures: Vec<f64> = (0..g.knots())
        .flat_map(|i| {
            let knot = g.temperature_k(i);
            (i + 1 < g.knots())
                .then(|| g.midpoint_k(i))
                .into_iter()
                .chain([knot])
                .rev()
        })
        .filter(|&t| g.locate(t).side == Side::Inside && second.grid().locate(t).side == Side::Inside)
        .collect();
    if temperatures.is_empty() {
        return Err(ClientError::invalid(
            "grid",
            format!(
                "[{}, {}] K and [{}, {}] K",
                g.t_min_k(),
                g.t_max_k(),
                second.grid().t_min_k(),
                second.grid().t_max_k()
            ),
            "the two table grids must overlap",
        ));
    }
    let mut out = LocalComparison {
        species: first.species().to_string(),
        first: first.stamp().clone(),
        second: second.stamp().clone(),
        differences: Vec::new(),
        only_in_first: Vec::new(),
        only_in_second: Vec::new(),
        header_mismatches: Vec::new(),
        temperature_count: temperatures.len(),
    };
    for t1 in first.tables() {
        let tr = key(t1);
        let Ok(t2) = second.table(tr.upper, tr.lower) else {
            out.only_in_first.push(tr);
            continue;
        };
        let (h1, h2) = (t1.header(), t2.header());
        for (name, a, b) in [
            ("g_lower", h1.g_lower, h2.g_lower),
            ("g_upper", h1.g_upper, h2.g_upper),
            (
                "excitation_energy_k",
                h1.excitation_energy_k,
                h2.excitation_energy_k,
            ),
        ] {
            if a != b {
                out.header_mismatches.push(format!("{tr} {name}: {a} vs {b}"));
            }
        }
        let mut worst = (0.0, temperatures[0]);
        for &t_k in &temperatures {
            let q1 = t1.evaluate(t_k, OutsidePolicy::Refuse)?.deexcitation_cm3_s;
            let q2 = t2.evaluate(t_k, OutsidePolicy::Refuse)?.deexcitation_cm3_s;
            let d = relative_difference(q1, q2);
            if d > worst.0 {
                worst = (d, t_k);
            }
        }
        out.differences.push(TableDifference {
            transition: tr,
            max_relative_difference: worst.0,
            at_temperature_k: worst.1,
        });
    }
    for t2 in second.tables() {
        let tr = key(t2);
        if first.table(tr.upper, tr.lower).is_err() {
            out.only_in_second.push(tr);
        }
    }
    Ok(out)
}

fn key(t: &RateTable) -> Transition {
    Transition {
        upper: t.header().upper,
        lower: t.header().lower,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::local::tests::invented_response;

    #[test]
    fn identical_sets_differ_by_nothing() {
        let a = LocalTables::from_wire(invented_response("aa")).unwrap();
        let c = compare_tables(&a, &a).unwrap();
        assert_eq!(c.differences.len(), 3);
        assert_eq!(c.max_relative_difference(), 0.0);
        // Knots and midpoints of a 31-knot grid: 31 + 30.
        assert_eq!(c.temperature_count, 61);
        assert!(c.only_in_first.is_empty() && c.only_in_second.is_empty());
    }

    #[test]
    fn a_scaled_table_shows_its_relative_difference() {
        let a = LocalTables::from_wire(invented_response("aa")).unwrap();
        let mut wire = invented_response("bb");
        // Upsilon of 2-1 times 1.1 everywhere: ln Upsilon + ln 1.1, slopes unchanged.
        for y in &mut wire.tables[0].ln_upsilon {
            *y += 1.1f64.ln();
        }
        wire.tables.remove(2);
        let b = LocalTables::from_wire(wire).unwrap();
        let c = compare_tables(&a, &b).unwrap();
        // q scales with Upsilon, so |1.1 q - q| / (1.1 q) = 0.1 / 1.1 at every temperature.
        assert!((c.differences[0].max_relative_difference - 0.1 / 1.1).abs() < 1e-12);
        assert_eq!(c.differences[1].max_relative_difference, 0.0);
        assert_eq!(c.only_in_first, vec![Transition { upper: 3, lower: 2 }]);
        assert_eq!(c.second.content_hash, "bb");
    }

    #[test]
    fn relative_difference_is_symmetric_and_safe_at_zero() {
        assert_eq!(relative_difference(0.0, 0.0), 0.0);
        assert_eq!(relative_difference(1.0, 2.0), 0.5);
        assert_eq!(relative_difference(2.0, 1.0), 0.5);
    }
}
