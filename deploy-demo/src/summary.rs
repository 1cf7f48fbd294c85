//! The JSON summary a job prints, and that `verify` reads back.

use serde::{Deserialize, Serialize};

/// What every summary says about its numbers.
pub(crate) const INVENTED_NOTE: &str = "INVENTED demo: the cooling track is made up and the demo \
     dataset's atomic data are invented; the numbers show that jobs agree, not anything about nature.";

/// Everything one job reports.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct Summary {
    /// The job's name.
    pub(crate) job_id: String,
    /// The caution that the data are invented.
    pub(crate) note: String,
    /// Server address used ("none ..." when the tables came from a table file).
    pub(crate) server: String,
    /// Where the tables came from: the server, the server through a shared folder, or a file.
    pub(crate) tables_source: String,
    /// The table-set digest of the tables evaluated (equal digests: equal bits).
    pub(crate) table_set_digest: String,
    /// The dataset every answer came from.
    pub(crate) dataset: DatasetInfo,
    /// Species evaluated.
    pub(crate) species: String,
    /// The track followed.
    pub(crate) track: TrackInfo,
    /// Local evaluation totals.
    pub(crate) local: LocalInfo,
    /// Each population solve asked of the server.
    pub(crate) solves: Vec<SolveInfo>,
    /// The bit-for-bit check of local values against server lookups.
    pub(crate) server_check: CheckInfo,
    /// Checksums of every number computed.
    pub(crate) checksum: ChecksumInfo,
    /// Wall-clock times (not part of any comparison).
    pub(crate) timing: TimingInfo,
    /// The server's cautions about the tables (approximate data, extrapolation).
    pub(crate) cautions: Vec<String>,
}

/// Dataset stamp.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct DatasetInfo {
    /// Dataset id.
    pub(crate) id: String,
    /// Dataset version.
    pub(crate) version: String,
    /// blake3 content hash, hex.
    pub(crate) content_hash: String,
    /// The hash the job was pinned to, if any.
    pub(crate) pinned_content_hash: Option<String>,
}

/// The cooling track.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct TrackInfo {
    /// Number of steps.
    pub(crate) steps: usize,
    /// Steps between population solves.
    pub(crate) solve_every: usize,
    /// First temperature, K.
    pub(crate) t_start_k: f64,
    /// Last temperature, K.
    pub(crate) t_end_k: f64,
    /// First electron density, cm^-3.
    pub(crate) ne_start_cm3: f64,
    /// Last electron density, cm^-3.
    pub(crate) ne_end_cm3: f64,
}

/// Local evaluation totals.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct LocalInfo {
    /// Transitions with rate tables.
    pub(crate) transitions: usize,
    /// Rate coefficients evaluated (both directions, every step).
    pub(crate) rate_values: u64,
    /// Of the (transition, step) pairs: how many used approximation formulas.
    pub(crate) approximate: u64,
    /// ... how many lay outside the source data's temperature range (scaled extrapolation).
    pub(crate) beyond_source: u64,
    /// Total collisional excitation rate out of the ground level, n_e sum_u q_1u, s^-1, at the
    /// first step.
    pub(crate) ground_excitation_start_per_s: f64,
    /// The same at the last step, s^-1.
    pub(crate) ground_excitation_end_per_s: f64,
}

/// One population solve.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct SolveInfo {
    /// Step of the track.
    pub(crate) step: usize,
    /// Electron temperature, K.
    pub(crate) temperature_k: f64,
    /// Electron density, cm^-3.
    pub(crate) density_cm3: f64,
    /// Fraction of ions in the ground level.
    pub(crate) ground_fraction: f64,
    /// Total radiated power per ion, W.
    pub(crate) radiated_power_per_ion_w: f64,
    /// The strongest line, if any line radiates.
    pub(crate) strongest_line: Option<LineInfo>,
}

/// One emission line.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct LineInfo {
    /// "upper-lower".
    pub(crate) transition: String,
    /// Vacuum wavelength, Angstrom.
    pub(crate) wavelength_vacuum_angstrom: f64,
    /// Emissivity per ion, W.
    pub(crate) emissivity_per_ion_w: f64,
}

/// Local values compared with the server's lookups of the same temperatures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct CheckInfo {
    /// Lookups asked of the server.
    pub(crate) lookups: u64,
    /// Numbers compared (q_lu, q_ul and flags per transition).
    pub(crate) values_compared: u64,
    /// Numbers whose bits differed.
    pub(crate) bit_mismatches: u64,
}

/// Checksums (blake3 over the IEEE 754 bits of every number, in order).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct ChecksumInfo {
    /// How the checksums are made.
    pub(crate) method: String,
    /// Every locally evaluated q_lu, q_ul and flag, step by step.
    pub(crate) local_rates: String,
    /// Every number of every population answer.
    pub(crate) server_solves: String,
    /// Both of the above, combined: equal only if every number is equal.
    pub(crate) all: String,
    /// Numbers covered.
    pub(crate) values: u64,
}

/// Wall-clock times, s.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub(crate) struct TimingInfo {
    /// Fetching the tables (once).
    pub(crate) fetch_s: f64,
    /// Evaluating locally (all steps).
    pub(crate) local_evaluation_s: f64,
    /// Population solves and check lookups on the server.
    pub(crate) server_calls_s: f64,
    /// The whole job.
    pub(crate) total_s: f64,
}
