//! Shared test fixtures: a synthetic species with every data form for every transition type,
//! built from shapes whose Maxwellian averages have closed forms.
#![allow(dead_code, unreachable_pub)]

use ratewell_service::dataset::units::cm1_to_ry;
use ratewell_service::dataset::{Dataset, load_dataset_from_texts};
use ratewell_service::physics::constants::{KELVIN_PER_RYDBERG, rate_prefactor_cm3_s_k_half};

/// De-excitation rate coefficient in closed form, cm^3 s^-1: q_ul = C Upsilon / (g_u T^1/2)
/// (Osterbrock & Ferland 2006, eq. 3.20; C from CODATA 2018). The served path computes it with
/// the evaluation rule; tests build their own inputs and references with this.
pub fn closed_form_q_ul(upsilon: f64, g_upper: f64, t_k: f64) -> f64 {
    rate_prefactor_cm3_s_k_half() * upsilon / (g_upper * t_k.sqrt())
}

/// Excitation rate coefficient by detailed balance, cm^3 s^-1:
/// q_lu = (g_u / g_l) q_ul exp(-dE/kT) (Osterbrock & Ferland 2006, eq. 3.21).
pub fn closed_form_q_lu(upsilon: f64, g_lower: f64, g_upper: f64, delta_e_k: f64, t_k: f64) -> f64 {
    (g_upper / g_lower) * closed_form_q_ul(upsilon, g_upper, t_k) * (-delta_e_k / t_k).exp()
}

/// The transition types in their file spelling.
pub const TYPES: [&str; 4] = ["allowed", "forbidden", "spin-change", "weak-allowed"];

/// Level energies of the synthetic species, cm^-1 (eight levels, 28 pairs).
const LEVELS_CM1: [f64; 8] = [0.0, 1500.0, 12000.0, 25000.0, 40000.0, 61000.0, 83000.0, 110000.0];

/// Collision strength Omega(E_f) = a + b E_f (E_f in Ry) up to `LINEAR_LAST_RY` and constant
/// beyond (the forbidden-type continuation). Its Maxwellian average is
/// Upsilon(T) = a + b kT (1 - e^(-E_N/kT)) (integrate (a + b kT x) e^-x over x < x_N and the
/// constant a + b kT x_N beyond; Osterbrock & Ferland 2006, eq. 3.20 defines the average).
pub const LINEAR_A: f64 = 0.4;
/// Slope b of the linear collision strength, per Ry.
pub const LINEAR_B: f64 = 0.25;
/// Last tabulated scattered energy of the linear collision strength, Ry.
pub const LINEAR_LAST_RY: f64 = 4.0;
/// Constant collision strength: its average is the same constant at every temperature.
pub const CONSTANT_OMEGA: f64 = 0.83;
/// Flat effective collision strength.
pub const FLAT_UPSILON: f64 = 0.61;
/// Temperatures of the effective-collision-strength tables, K.
pub const UPSILON_TEMPERATURES_K: [f64; 6] = [2.0e3, 5.0e3, 1.0e4, 3.0e4, 1.0e5, 3.0e5];

/// The closed-form average of the linear collision strength at `t_k`.
pub fn linear_omega_average(t_k: f64) -> f64 {
    let kt = t_k / KELVIN_PER_RYDBERG;
    LINEAR_A + LINEAR_B * kt * (1.0 - (-LINEAR_LAST_RY / kt).exp())
}

/// What one synthetic collision block holds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Shape {
    /// Upsilon constant at [`FLAT_UPSILON`] on [`UPSILON_TEMPERATURES_K`].
    FlatUpsilon,
    /// Upsilon = [`linear_omega_average`] on [`UPSILON_TEMPERATURES_K`].
    CurvedUpsilon,
    /// Omega = [`CONSTANT_OMEGA`] from threshold (scattered energies from 0).
    ConstantOmegaFromThreshold,
    /// Omega = a + b E_f from threshold up to [`LINEAR_LAST_RY`].
    LinearOmegaFromThreshold,
    /// Omega = a + b E_f given on incident energies from just above threshold.
    LinearOmegaIncident,
    /// Omega from threshold at two points only (scattered energies 0 and 0.2 Ry).
    TwoPointsFromThreshold,
    /// Omega on incident energies starting exactly at the transition energy.
    IncidentFromThreshold,
    /// Van Regemorter estimate.
    VanRegemorter,
    /// Semi-classical estimate.
    CoulombFocusing,
}

/// Every (shape, type) the synthetic species holds, in the order of its level pairs.
pub fn blocks() -> Vec<(Shape, &'static str)> {
    let mut out = Vec::new();
    for kind in TYPES {
        out.push((Shape::FlatUpsilon, kind));
        out.push((Shape::CurvedUpsilon, kind));
        out.push((Shape::ConstantOmegaFromThreshold, kind));
        out.push((Shape::LinearOmegaFromThreshold, kind));
        out.push((Shape::LinearOmegaIncident, kind));
        out.push((Shape::CoulombFocusing, kind));
    }
    out.push((Shape::VanRegemorter, "allowed"));
    out.push((Shape::VanRegemorter, "weak-allowed"));
    out.push((Shape::TwoPointsFromThreshold, "forbidden"));
    out.push((Shape::IncidentFromThreshold, "spin-change"));
    out
}

/// Level pairs (upper, lower) in a fixed order, as many as [`blocks`] needs.
pub fn pairs() -> Vec<(u32, u32)> {
    let n = LEVELS_CM1.len() as u32;
    let mut out = Vec::new();
    for upper in 2..=n {
        for lower in 1..upper {
            out.push((upper, lower));
        }
    }
    out
}

/// The level pair (upper, lower) that holds `shape` of type `kind`.
pub fn pair_of(shape: Shape, kind: &str) -> Option<(u32, u32)> {
    blocks()
        .into_iter()
        .zip(pairs())
        .find(|((s, k), _)| *s == shape && *k == kind)
        .map(|(_, pair)| pair)
}

/// The synthetic dataset "synthetic" with species "Sy II".
pub fn synthetic_dataset() -> Dataset {
    let manifest = "format = 1\nid = \"synthetic\"\nversion = \"1.0.0\"\n\
        description = \"Synthetic shapes with closed-form averages, for tests.\"\n\
        provenance = \"Written by the tests.\"\n";
    let text = synthetic_species_text();
    load_dataset_from_texts(&[("dataset.toml", manifest), ("sy-ii.toml", &text)])
        .expect("synthetic data load")
}

/// The TOML text of the synthetic species.
pub fn synthetic_species_text() -> String {
    let mut t = String::from(
        "[species]\nname = \"Sy II\"\nelement = \"Sy\"\nnuclear_charge = 20\nion_charge = 1\nsource = \"synthetic\"\n\
         [units]\nenergy = \"cm-1\"\ntemperature = \"K\"\ncollision_energy = \"Ry\"\n",
    );
    for (i, e) in LEVELS_CM1.iter().enumerate() {
        let g = [1, 3, 5, 3, 5, 7, 3, 5][i];
        t += &format!(
            "[[level]]\nindex = {}\nlabel = \"L{}\"\nweight = {g}\nenergy = {e:?}\nsource = \"synthetic\"\n",
            i + 1,
            i + 1
        );
    }
    let blocks = blocks();
    let pairs = pairs();
    assert!(pairs.len() >= blocks.len());
    for (&(shape, kind), &(upper, lower)) in blocks.iter().zip(&pairs) {
        // Every pair also radiates, with an oscillator strength (used by the allowed types).
        t += &format!(
            "[[radiative]]\nupper = {upper}\nlower = {lower}\na_per_s = 1.0e3\noscillator_strength = 0.05\nsource = \"synthetic\"\n"
        );
        t += &format!(
            "[[collision]]\nupper = {upper}\nlower = {lower}\ntype = \"{kind}\"\nsource = \"synthetic\"\n"
        );
        let list = |v: &[f64]| {
            format!(
                "[{}]",
                v.iter().map(|x| format!("{x:?}")).collect::<Vec<_>>().join(", ")
            )
        };
        let linear_energies: Vec<f64> = (0..=16).map(|k| LINEAR_LAST_RY * f64::from(k) / 16.0).collect();
        match shape {
            Shape::FlatUpsilon => {
                t += &format!(
                    "temperatures = {}\nupsilon = {}\n",
                    list(&UPSILON_TEMPERATURES_K),
                    list(&[FLAT_UPSILON; 6])
                );
            }
            Shape::CurvedUpsilon => {
                let ups: Vec<f64> = UPSILON_TEMPERATURES_K
                    .iter()
                    .map(|&t| linear_omega_average(t))
                    .collect();
                t += &format!(
                    "temperatures = {}\nupsilon = {}\n",
                    list(&UPSILON_TEMPERATURES_K),
                    list(&ups)
                );
            }
            Shape::ConstantOmegaFromThreshold => {
                t += &format!(
                    "energies = [0.0, 0.5, 1.0, 4.0]\nenergy_kind = \"scattered\"\nomega = {}\n",
                    list(&[CONSTANT_OMEGA; 4])
                );
            }
            Shape::LinearOmegaFromThreshold => {
                let omega: Vec<f64> = linear_energies.iter().map(|e| LINEAR_A + LINEAR_B * e).collect();
                t += &format!(
                    "energies = {}\nenergy_kind = \"scattered\"\nomega = {}\n",
                    list(&linear_energies),
                    list(&omega)
                );
            }
            Shape::LinearOmegaIncident => {
                let de_ry =
                    (LEVELS_CM1[upper as usize - 1] - LEVELS_CM1[lower as usize - 1]) / 109_737.315_681_6;
                let incident: Vec<f64> = linear_energies
                    .iter()
                    .map(|e| e + de_ry * 1.001 + 0.001)
                    .collect();
                let omega: Vec<f64> = linear_energies.iter().map(|e| LINEAR_A + LINEAR_B * e).collect();
                t += &format!(
                    "energies = {}\nenergy_kind = \"incident\"\nomega = {}\n",
                    list(&incident),
                    list(&omega)
                );
            }
            Shape::TwoPointsFromThreshold => {
                t += "energies = [0.0, 0.2]\nenergy_kind = \"scattered\"\nomega = [0.5, 0.6]\n";
            }
            Shape::IncidentFromThreshold => {
                // The loader subtracts the same threshold (cm1_to_ry of the level energies), so
                // the first scattered energy is exactly 0.
                let de_ry = cm1_to_ry(LEVELS_CM1[upper as usize - 1] - LEVELS_CM1[lower as usize - 1]);
                t += &format!(
                    "energies = {}\nenergy_kind = \"incident\"\nomega = [0.9, 0.8, 0.5]\n",
                    list(&[de_ry, de_ry + 0.3, de_ry + 1.0])
                );
            }
            Shape::VanRegemorter => t += "estimate = \"van-regemorter\"\n",
            Shape::CoulombFocusing => t += "estimate = \"coulomb-focusing\"\n",
        }
    }
    t
}
