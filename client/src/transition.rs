//! A collisional transition named by its two levels, and the grid a table set is built on.

use crate::error::ClientError;
use ratewell_proto::pb;
use ratewell_proto::rule::LogGrid;
use std::fmt;
use std::str::FromStr;

/// A transition between two levels, 1-based level indices as in the dataset files,
/// written "upper-lower" (e.g. "4-1").
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Transition {
    /// Upper level index (1-based).
    pub upper: u32,
    /// Lower level index (1-based).
    pub lower: u32,
}

impl Transition {
    /// The transition `upper`-`lower`; upper must be above lower, and lower >= 1.
    pub fn new(upper: u32, lower: u32) -> Result<Self, ClientError> {
        if lower == 0 || upper <= lower {
            return Err(ClientError::invalid(
                "transition",
                format!("{upper}-{lower}"),
                "must be upper-lower with upper > lower >= 1",
            ));
        }
        Ok(Self { upper, lower })
    }

    /// The wire key.
    pub fn to_wire(self) -> pb::TransitionKey {
        pb::TransitionKey {
            upper: self.upper,
            lower: self.lower,
        }
    }
}

impl From<pb::TransitionKey> for Transition {
    fn from(k: pb::TransitionKey) -> Self {
        Self {
            upper: k.upper,
            lower: k.lower,
        }
    }
}

impl fmt::Display for Transition {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}-{}", self.upper, self.lower)
    }
}

impl FromStr for Transition {
    type Err = ClientError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let bad = || {
            ClientError::invalid(
                "transition",
                format!("{s:?}"),
                "must be upper-lower with upper > lower >= 1, e.g. 4-1",
            )
        };
        let (u, l) = s.trim().split_once('-').ok_or_else(bad)?;
        let upper = u.trim().parse::<u32>().map_err(|_| bad())?;
        let lower = l.trim().parse::<u32>().map_err(|_| bad())?;
        Transition::new(upper, lower).map_err(|_| bad())
    }
}

/// How to build tables: temperature range in K and points per decade. Unset in a call means
/// the dataset's default grid.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TableGrid {
    /// Lowest temperature, K.
    pub t_min_k: f64,
    /// Highest temperature, K.
    pub t_max_k: f64,
    /// Grid points per decade of temperature.
    pub points_per_decade: u32,
}

impl TableGrid {
    /// A grid spec, checked with the same limits the evaluation rule applies.
    pub fn new(t_min_k: f64, t_max_k: f64, points_per_decade: u32) -> Result<Self, ClientError> {
        LogGrid::from_range(t_min_k, t_max_k, points_per_decade)?;
        Ok(Self {
            t_min_k,
            t_max_k,
            points_per_decade,
        })
    }

    /// The wire form.
    pub fn to_wire(self) -> pb::GridSpec {
        pb::GridSpec {
            t_min_k: self.t_min_k,
            t_max_k: self.t_max_k,
            points_per_decade: self.points_per_decade,
        }
    }

    /// A hashable key (exact bits of the range).
    pub(crate) fn key(self) -> (u64, u64, u32) {
        (
            self.t_min_k.to_bits(),
            self.t_max_k.to_bits(),
            self.points_per_decade,
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn transitions_parse_and_bad_ones_are_named() {
        let t: Transition = "4-1".parse().unwrap();
        assert_eq!((t.upper, t.lower), (4, 1));
        assert_eq!(t.to_string(), "4-1");
        for bad in ["1-4", "4", "a-1", "0-0", "3-0", "-1", "2-2"] {
            let e = bad.parse::<Transition>().unwrap_err().to_string();
            assert!(e.starts_with(&format!("transition = {bad:?}")), "{e}");
            assert!(e.contains("upper > lower >= 1"), "{e}");
        }
    }

    #[test]
    fn grids_are_checked_with_the_rule_limits() {
        assert!(TableGrid::new(1e3, 1e6, 10).is_ok());
        let e = TableGrid::new(1e4, 1e3, 10).unwrap_err().to_string();
        assert!(e.contains("t_max_k = 1000"), "{e}");
        assert!(TableGrid::new(1e3, 1e6, 0).is_err());
        assert!(TableGrid::new(-1.0, 1e6, 10).is_err());
    }
}
