//! Conversions between wire tables and [`crate::rule`] types. The client builds its local
//! tables through [`table_from_wire`], the server serves through [`table_to_wire`]; both keep
//! knots and slopes unchanged, so evaluation agrees bit for bit.

use crate::pb;
use crate::rule::{LogGrid, RateTable, RuleError, TableHeader};

/// The wire form of a grid.
pub fn grid_to_wire(grid: &LogGrid) -> pb::LogTemperatureGrid {
    pb::LogTemperatureGrid {
        log10_t_min_k: grid.log10_t_min_k(),
        log10_t_step: grid.log10_t_step(),
        knots: grid.knots() as u32,
    }
}

/// A grid from its wire form.
pub fn grid_from_wire(grid: &pb::LogTemperatureGrid) -> Result<LogGrid, RuleError> {
    LogGrid::new(grid.log10_t_min_k, grid.log10_t_step, grid.knots as usize)
}

/// The wire form of a table.
pub fn table_to_wire(table: &RateTable) -> pb::RateTable {
    let h = table.header();
    pb::RateTable {
        key: Some(pb::TransitionKey {
            upper: h.upper,
            lower: h.lower,
        }),
        g_lower: h.g_lower,
        g_upper: h.g_upper,
        excitation_energy_k: h.excitation_energy_k,
        ln_upsilon: table.ln_upsilon().collect(),
        slopes: table.slopes().collect(),
        source_t_min_k: h.source_t_min_k,
        source_t_max_k: h.source_t_max_k,
        approximate: h.approximate,
        max_interpolation_error: table.max_interpolation_error(),
    }
}

/// A table from its wire form on the response's grid.
pub fn table_from_wire(table: pb::RateTable, grid: LogGrid) -> Result<RateTable, RuleError> {
    let key = table.key.unwrap_or_default();
    let header = TableHeader {
        upper: key.upper,
        lower: key.lower,
        g_lower: table.g_lower,
        g_upper: table.g_upper,
        excitation_energy_k: table.excitation_energy_k,
        source_t_min_k: table.source_t_min_k,
        source_t_max_k: table.source_t_max_k,
        approximate: table.approximate,
    };
    // Knots and slopes move into the table (no copy: a large species is tens of megabytes).
    RateTable::from_parts(
        header,
        grid,
        table.ln_upsilon,
        table.slopes,
        table.max_interpolation_error,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rule::OutsidePolicy;

    #[test]
    fn round_trip_through_the_wire_is_bit_exact() {
        let grid = LogGrid::from_range(1e3, 1e7, 20).unwrap();
        let header = TableHeader {
            upper: 3,
            lower: 1,
            g_lower: 1.0,
            g_upper: 5.0,
            excitation_energy_k: 29_000.0,
            source_t_min_k: 5e3,
            source_t_max_k: 2e4,
            approximate: false,
        };
        let y: Vec<f64> = (0..grid.knots()).map(|i| 0.1 * (i as f64).cos()).collect();
        let table = RateTable::from_knots(header, grid, y)
            .unwrap()
            .with_max_interpolation_error(1e-5);
        let wire_grid = grid_from_wire(&grid_to_wire(&grid)).unwrap();
        let back = table_from_wire(table_to_wire(&table), wire_grid).unwrap();
        assert_eq!(back, table);
        for t in [1e3, 3.3e3, 1e4, 7.7e5, 1e7] {
            let a = table.evaluate(t, OutsidePolicy::Refuse).unwrap();
            let b = back.evaluate(t, OutsidePolicy::Refuse).unwrap();
            assert_eq!(a.deexcitation_cm3_s.to_bits(), b.deexcitation_cm3_s.to_bits());
            assert_eq!(a.excitation_cm3_s.to_bits(), b.excitation_cm3_s.to_bits());
        }
    }
}
