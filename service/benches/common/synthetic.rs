//! INVENTED benchmark data: species of the fictional element "Bm" with any number of levels,
//! every level pair coupled collisionally and radiatively. Nothing here is measured or computed
//! from atomic structure; the numbers only have plausible magnitudes (A from 1e-3 to 1e9 s^-1,
//! effective collision strengths 0.01 to 10, level energies up to 1.5e5 cm^-1).
//!
//! Shared by the service benchmarks and the `ratewell-bench-core` binary (included with
//! `#[path]`), written as dataset files in our TOML format so loading goes through the loader.
//! Deterministic: a fixed linear congruential generator.

use std::fmt::Write;

/// Nuclear charge of the invented element (beyond the periodic table on purpose).
pub(crate) const NUCLEAR_CHARGE: u32 = 140;

/// Numerical Recipes 32-bit LCG; uniform floats in [0, 1).
struct Lcg(u32);

impl Lcg {
    fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_mul(1_664_525).wrapping_add(1_013_904_223);
        f64::from(self.0) / 4_294_967_296.0
    }
    fn between(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }
    fn log_between(&mut self, lo: f64, hi: f64) -> f64 {
        self.between(lo.ln(), hi.ln()).exp()
    }
}

/// Roman numeral of `n` (1..=3999), for the spectroscopic species name.
pub(crate) fn roman(mut n: u32) -> String {
    let table = [
        (1000, "M"),
        (900, "CM"),
        (500, "D"),
        (400, "CD"),
        (100, "C"),
        (90, "XC"),
        (50, "L"),
        (40, "XL"),
        (10, "X"),
        (9, "IX"),
        (5, "V"),
        (4, "IV"),
        (1, "I"),
    ];
    let mut s = String::new();
    for (value, text) in table {
        while n >= value {
            s.push_str(text);
            n -= value;
        }
    }
    s
}

/// The species name for `ion_charge` ("Bm I" for 0, "Bm II" for 1, ...).
pub(crate) fn species_name(ion_charge: u32) -> String {
    format!("Bm {}", roman(ion_charge + 1))
}

/// What share of the collisional transitions each data form gets.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Mix {
    /// Fraction given as collision strength tables (averaged over a Maxwellian at load).
    pub(crate) strength_tables: f64,
    /// Fraction given by the semi-classical estimate (no data).
    pub(crate) estimates: f64,
}

impl Default for Mix {
    /// 90 % effective collision strength tables, 5 % collision strength tables, 5 % estimates.
    fn default() -> Self {
        Self {
            strength_tables: 0.05,
            estimates: 0.05,
        }
    }
}

/// One species file: `levels` levels, all level pairs with a radiative line and a collisional
/// transition (levels (levels - 1) / 2 of each), data forms mixed per `mix`.
pub(crate) fn species_toml(levels: usize, ion_charge: u32, mix: Mix) -> String {
    let mut rng = Lcg(0x5eed_0000 ^ (levels as u32).wrapping_mul(2_654_435_761));
    let mut s = String::with_capacity(levels * levels * 160);
    let name = species_name(ion_charge);
    let _ = writeln!(
        s,
        "# INVENTED benchmark data (fictional element Bm): made-up numbers, not atomic data.\n\
         [species]\nname = \"{name}\"\nelement = \"Bm\"\nnuclear_charge = {NUCLEAR_CHARGE}\n\
         ion_charge = {ion_charge}\nsource = \"INVENTED by ratewell's benchmark generator\"\n\n\
         [units]\nenergy = \"cm-1\"\ntemperature = \"K\"\ncollision_energy = \"Ry\"\n\n\
         [sources]\ninvented = \"INVENTED numbers for ratewell benchmarks; not real atomic data\"\n"
    );
    let mut energies = Vec::with_capacity(levels);
    let mut weights = Vec::with_capacity(levels);
    for i in 0..levels {
        let x = if levels > 1 {
            i as f64 / (levels - 1) as f64
        } else {
            0.0
        };
        let energy = 1.5e5 * x.powf(0.7) + 25.0 * i as f64;
        let weight = 1 + 2 * (i % 5);
        energies.push(energy);
        weights.push(weight);
        let _ = writeln!(
            s,
            "[[level]]\nindex = {}\nlabel = \"n{} L{}\"\nweight = {weight}\nenergy = {energy:.3}\nsource = \"@invented\"\n",
            i + 1,
            i + 1,
            i % 7
        );
    }
    for upper in 2..=levels {
        for lower in 1..upper {
            let allowed = (upper + lower) % 2 == 1;
            let a = if allowed {
                rng.log_between(1e6, 1e9)
            } else {
                rng.log_between(1e-3, 1e2)
            };
            let _ = writeln!(
                s,
                "[[radiative]]\nupper = {upper}\nlower = {lower}\na_per_s = {a:.4e}\nsource = \"@invented\"\n"
            );
        }
    }
    for upper in 2..=levels {
        for lower in 1..upper {
            let allowed = (upper + lower) % 2 == 1;
            let kind = if allowed {
                "allowed"
            } else if (upper * lower) % 3 == 0 {
                "spin-change"
            } else {
                "forbidden"
            };
            let _ = write!(
                s,
                "[[collision]]\nupper = {upper}\nlower = {lower}\ntype = \"{kind}\"\n"
            );
            let pick = rng.uniform();
            let base = rng.log_between(0.01, 10.0);
            if pick < mix.estimates {
                let strength = rng.between(0.5, 1.5);
                let _ = write!(s, "estimate = \"coulomb-focusing\"\nstrength = {strength:.3}\n");
            } else if pick < mix.estimates + mix.strength_tables {
                let energies_ry = [0.0, 0.05, 0.1, 0.3, 1.0, 3.0, 10.0];
                let slope = if allowed { 0.25 } else { -0.05 };
                let omega: Vec<String> = energies_ry
                    .iter()
                    .map(|e: &f64| format!("{:.4}", base * (1.0 + e).powf(slope) * rng.between(0.95, 1.05)))
                    .collect();
                let _ = write!(
                    s,
                    "energies = [0.0, 0.05, 0.1, 0.3, 1.0, 3.0, 10.0]\nenergy_kind = \"scattered\"\nomega = [{}]\n",
                    omega.join(", ")
                );
            } else {
                let temps = [1e3, 3e3, 1e4, 3e4, 1e5, 3e5, 1e6, 3e6];
                let slope = if allowed {
                    rng.between(0.1, 0.4)
                } else {
                    rng.between(-0.15, 0.1)
                };
                let upsilon: Vec<String> = temps
                    .iter()
                    .map(|t: &f64| format!("{:.4e}", base * (t / 1e4).powf(slope) * rng.between(0.97, 1.03)))
                    .collect();
                let _ = write!(
                    s,
                    "temperatures = [1e3, 3e3, 1e4, 3e4, 1e5, 3e5, 1e6, 3e6]\nupsilon = [{}]\n",
                    upsilon.join(", ")
                );
            }
            let _ = writeln!(s, "source = \"@invented\"\n");
        }
    }
    s
}

/// The manifest of a dataset `id` holding `species_files`.
pub(crate) fn manifest_toml(id: &str, species_files: &[String]) -> String {
    let files: Vec<String> = species_files.iter().map(|f| format!("\"{f}\"")).collect();
    format!(
        "# INVENTED benchmark dataset: made-up numbers for measuring ratewell, not atomic data.\n\
         format = 1\nid = \"{id}\"\nversion = \"1.0.0\"\n\
         description = \"INVENTED benchmark species of the fictional element Bm; not for science\"\n\
         provenance = \"INVENTED by ratewell's benchmark generator (service/benches/common/synthetic.rs); no published source\"\n\
         species_files = [{}]\n",
        files.join(", ")
    )
}

/// (file name, text) pairs of a dataset `id` with one species per entry of `level_counts`
/// (ion charges 0, 1, 2, ... in that order).
pub(crate) fn dataset_files(id: &str, level_counts: &[usize], mix: Mix) -> Vec<(String, String)> {
    let mut files = Vec::new();
    let mut names = Vec::new();
    for (charge, &n) in level_counts.iter().enumerate() {
        let file = format!("bm-{n}-levels.toml");
        files.push((file.clone(), species_toml(n, charge as u32, mix)));
        names.push(file);
    }
    files.push(("dataset.toml".to_string(), manifest_toml(id, &names)));
    files
}
