//! Warnings about a dataset that loads but looks wrong: what a reviewer of a new dataset would
//! ask about before trusting its numbers. Errors stop a load (see `validate`); these do not.
//!
//! - A level pair with a radiative transition but no collision data: the solve then has no
//!   collisional coupling between the two levels, which is rarely what the compiler meant.
//! - An element symbol that is not the element of the stated nuclear charge (Z <= 118), or a
//!   nuclear charge beyond the known elements (invented data, like the demo's, say so).

use super::model::Dataset;

/// Symbols of the elements by nuclear charge, Z = 1 to 118 (IUPAC names as of 2016; common
/// practice, no source needed beyond any periodic table).
const ELEMENTS: [&str; 118] = [
    "H", "He", "Li", "Be", "B", "C", "N", "O", "F", "Ne", "Na", "Mg", "Al", "Si", "P", "S", "Cl", "Ar", "K",
    "Ca", "Sc", "Ti", "V", "Cr", "Mn", "Fe", "Co", "Ni", "Cu", "Zn", "Ga", "Ge", "As", "Se", "Br", "Kr",
    "Rb", "Sr", "Y", "Zr", "Nb", "Mo", "Tc", "Ru", "Rh", "Pd", "Ag", "Cd", "In", "Sn", "Sb", "Te", "I", "Xe",
    "Cs", "Ba", "La", "Ce", "Pr", "Nd", "Pm", "Sm", "Eu", "Gd", "Tb", "Dy", "Ho", "Er", "Tm", "Yb", "Lu",
    "Hf", "Ta", "W", "Re", "Os", "Ir", "Pt", "Au", "Hg", "Tl", "Pb", "Bi", "Po", "At", "Rn", "Fr", "Ra",
    "Ac", "Th", "Pa", "U", "Np", "Pu", "Am", "Cm", "Bk", "Cf", "Es", "Fm", "Md", "No", "Lr", "Rf", "Db",
    "Sg", "Bh", "Hs", "Mt", "Ds", "Rg", "Cn", "Nh", "Fl", "Mc", "Lv", "Ts", "Og",
];

/// One warning: the species it is about and what looks wrong.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Warning {
    /// The species' name.
    pub species: String,
    /// What looks wrong, with the values involved.
    pub message: String,
}

impl std::fmt::Display for Warning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "species {}: {}", self.species, self.message)
    }
}

/// Every warning for `dataset`, species by species.
pub fn warnings(dataset: &Dataset) -> Vec<Warning> {
    let mut out = Vec::new();
    for s in &dataset.species {
        let warn = |message: String| Warning {
            species: s.name.clone(),
            message,
        };
        match usize::try_from(s.nuclear_charge)
            .ok()
            .and_then(|z| z.checked_sub(1))
            .and_then(|i| ELEMENTS.get(i))
        {
            Some(&symbol) if symbol != s.element => out.push(warn(format!(
                "element {:?} does not match nuclear_charge = {} (element {symbol})",
                s.element, s.nuclear_charge
            ))),
            Some(_) => {}
            None => out.push(warn(format!(
                "nuclear_charge = {} is beyond the known elements (1 to 118): invented data?",
                s.nuclear_charge
            ))),
        }
        for r in &s.radiative {
            let collided = s
                .collisions
                .iter()
                .any(|c| c.upper == r.upper && c.lower == r.lower);
            if !collided {
                out.push(warn(format!(
                    "transition {}-{} has radiative data but no collision data: the solve has no \
                     collisional coupling between these levels (add a table, or an estimate \
                     method to make it explicit)",
                    r.upper, r.lower
                )));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_element_table_is_in_order() {
        // Spot checks of the periodic table (common practice, no source).
        assert_eq!(ELEMENTS[0], "H");
        assert_eq!(ELEMENTS[7], "O");
        assert_eq!(ELEMENTS[25], "Fe");
        assert_eq!(ELEMENTS[91], "U");
        assert_eq!(ELEMENTS[117], "Og");
    }
}
