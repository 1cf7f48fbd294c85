//! The four transition types of Burgess & Tully (1992, A&A 254, 436), which fix both the
//! high-energy behaviour of a collision strength and the scaling used to interpolate it.

use super::error::PhysicsError;

/// Transition type, numbered as in Burgess & Tully (1992).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
pub enum TransitionType {
    /// Type 1: electric-dipole allowed; Omega grows like ln(E) at high energy (Bethe).
    Allowed,
    /// Type 2: forbidden, no spin change; Omega tends to a constant.
    Forbidden,
    /// Type 3: spin change (exchange only); Omega falls like E^-2.
    SpinChange,
    /// Type 4: allowed with a small oscillator strength; ln(E) growth sets in late.
    WeakAllowed,
}

impl TransitionType {
    /// Parse the dataset-file spelling: "allowed", "forbidden", "spin-change", "weak-allowed".
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "allowed" => Some(Self::Allowed),
            "forbidden" => Some(Self::Forbidden),
            "spin-change" => Some(Self::SpinChange),
            "weak-allowed" => Some(Self::WeakAllowed),
            _ => None,
        }
    }

    /// The dataset-file spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Allowed => "allowed",
            Self::Forbidden => "forbidden",
            Self::SpinChange => "spin-change",
            Self::WeakAllowed => "weak-allowed",
        }
    }

    /// The Burgess & Tully type number, 1 to 4.
    pub fn burgess_tully_number(self) -> u8 {
        match self {
            Self::Allowed => 1,
            Self::Forbidden => 2,
            Self::SpinChange => 3,
            Self::WeakAllowed => 4,
        }
    }

    /// The type with Burgess & Tully number `number` (1 to 4).
    pub fn from_burgess_tully_number(number: u8) -> Result<Self, PhysicsError> {
        match number {
            1 => Ok(Self::Allowed),
            2 => Ok(Self::Forbidden),
            3 => Ok(Self::SpinChange),
            4 => Ok(Self::WeakAllowed),
            _ => Err(PhysicsError::OutOfRange {
                field: "transition_type".to_owned(),
                value: f64::from(number),
                unit: "",
                allowed: "one of 1 (allowed), 2 (forbidden), 3 (spin change), 4 (weak allowed)",
            }),
        }
    }

    /// True for the types whose collision strength grows logarithmically (1 and 4).
    pub fn is_dipole_allowed(self) -> bool {
        matches!(self, Self::Allowed | Self::WeakAllowed)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_round_trip() {
        // Burgess & Tully 1992 number the types 1 to 4
        for n in 1..=4 {
            let t = TransitionType::from_burgess_tully_number(n).unwrap();
            assert_eq!(t.burgess_tully_number(), n);
        }
        assert!(TransitionType::from_burgess_tully_number(5).is_err());
    }
}
