//! The job itself: fetch a species' tables once, evaluate them locally at every step of the
//! cooling track, ask the server for level populations every few steps (checking the local
//! values against the server's own lookup at those steps), and summarise.

use crate::args::{JobPlan, TablesFrom};
use crate::digest::{NumberDigest, combine};
use crate::error::JobError;
use crate::summary::{
    CheckInfo, ChecksumInfo, DatasetInfo, INVENTED_NOTE, LineInfo, LocalInfo, SolveInfo, Summary, TimingInfo,
    TrackInfo,
};
use ratewell_client::{
    ClientConfig, EvalOptions, LocalTables, PopulationQuery, RateBuffers, RateLookup, RateQuery, Transition,
    blocking, flags, pb, short_hash,
};
use std::collections::HashMap;
use std::time::{Duration, Instant};

/// How the checksums are made (stated in every summary).
const CHECKSUM_METHOD: &str =
    "blake3 over the little-endian IEEE 754 bits of every number, in the order computed";

/// Runs the job, reporting progress on standard error.
pub(crate) fn run(plan: &JobPlan) -> Result<Summary, JobError> {
    let started = Instant::now();
    // One fetch per job (or one read of a table file); every later evaluation is in-process.
    let (client, tables, tables_source) = match &plan.tables_from {
        TablesFrom::Server { cache_dir } => {
            let mut config = ClientConfig::new(plan.server.clone())
                .with_dataset(plan.dataset.clone())
                .with_call_timeout(plan.call_timeout);
            config = ratewell_client::apply_options(config, &plan.client_options)?;
            if let Some(dir) = cache_dir {
                config = config.with_cache_dir(dir.clone());
            }
            let client = blocking::Client::new(config)?;
            let tables = client.fetch_tables(&plan.species, None)?;
            let source = match cache_dir {
                Some(dir) => format!(
                    "server {} through the shared folder {}",
                    plan.server,
                    dir.display()
                ),
                None => format!("server {}", plan.server),
            };
            (Some(client), tables, source)
        }
        TablesFrom::File(path) => {
            let tables = std::sync::Arc::new(LocalTables::load(path)?);
            check_file_matches_plan(plan, &tables)?;
            (None, tables, format!("table file {}", path.display()))
        }
    };
    let fetch = started.elapsed();
    let stamp = tables.stamp().clone();
    let grid = tables.grid();
    plan.track
        .check_within(grid.t_min_k(), grid.t_max_k(), &plan.species)?;
    progress(
        plan,
        format_args!(
            "job {}: {} tables of {} from {}@{} (hash {}); {} steps, populations every {}",
            plan.job_id,
            tables.tables().len(),
            tables.species(),
            stamp.id,
            stamp.version,
            short_hash(&stamp.content_hash),
            plan.track.steps(),
            plan.solve_every
        ),
    );

    let ground = ground_rows(&tables);
    let local_index: HashMap<Transition, usize> = tables
        .transitions()
        .into_iter()
        .enumerate()
        .map(|(i, t)| (t, i))
        .collect();
    let mut buffers = RateBuffers::default();
    let mut rates_digest = NumberDigest::new("ratewell-demo-job local rates");
    let mut solves_digest = NumberDigest::new("ratewell-demo-job population solves");
    let mut approximate = 0u64;
    let mut beyond_source = 0u64;
    let mut ground_excitation = (0.0, 0.0);
    let mut solves = Vec::new();
    let mut check = CheckInfo {
        lookups: 0,
        values_compared: 0,
        bit_mismatches: 0,
    };
    let (mut local_time, mut server_time) = (Duration::ZERO, Duration::ZERO);
    let steps = plan.track.steps();

    for step in 0..steps {
        let t_k = plan.track.temperature_k(step);
        let ne_cm3 = plan.track.density_cm3(step);

        let local_started = Instant::now();
        tables.evaluate_into(&[], &[t_k], EvalOptions::default(), &mut buffers)?;
        rates_digest.add_f64s(&buffers.excitation);
        rates_digest.add_f64s(&buffers.deexcitation);
        rates_digest.add_u32s(&buffers.flags);
        approximate += count_flag(&buffers.flags, flags::APPROXIMATE);
        beyond_source += count_flag(&buffers.flags, flags::BEYOND_SOURCE);
        let g = ground_excitation_per_s(&ground, &buffers.excitation, ne_cm3);
        if step == 0 {
            ground_excitation.0 = g;
        }
        ground_excitation.1 = g;
        local_time += local_started.elapsed();

        let Some(client) = &client else { continue };
        if step % plan.solve_every == 0 || step == steps - 1 {
            let server_started = Instant::now();
            let query = PopulationQuery::points(plan.species.clone(), vec![t_k], vec![ne_cm3]);
            let answer = client.solve_populations(&query)?;
            digest_solve(&mut solves_digest, &answer);
            solves.push(solve_info(step, &answer)?);
            let lookup = client.lookup_rates(&RateQuery::new(plan.species.clone(), vec![t_k]))?;
            let (compared, differing) = compare_bits(&lookup, &local_index, &buffers);
            check.lookups += 1;
            check.values_compared += compared;
            check.bit_mismatches += differing;
            server_time += server_started.elapsed();
        }
    }

    let local_rates = rates_digest.hex();
    let server_solves = solves_digest.hex();
    let all = combine(&[&local_rates, &server_solves]);
    let total = started.elapsed();
    progress(
        plan,
        format_args!(
            "job {}: done in {:.2} s, checksum {}, {} local values differ from the server",
            plan.job_id,
            total.as_secs_f64(),
            short_hash(&all),
            check.bit_mismatches
        ),
    );
    Ok(Summary {
        job_id: plan.job_id.clone(),
        note: INVENTED_NOTE.into(),
        server: if client.is_some() {
            plan.server.clone()
        } else {
            "none (tables from a table file)".into()
        },
        tables_source,
        table_set_digest: tables.digest().to_string(),
        dataset: DatasetInfo {
            id: stamp.id.clone(),
            version: stamp.version.clone(),
            content_hash: stamp.content_hash.clone(),
            pinned_content_hash: plan.dataset.pinned_content_hash().map(str::to_string),
        },
        species: tables.species().to_string(),
        track: TrackInfo {
            steps,
            solve_every: plan.solve_every,
            t_start_k: plan.track.temperature_k(0),
            t_end_k: plan.track.temperature_k(steps - 1),
            ne_start_cm3: plan.track.density_cm3(0),
            ne_end_cm3: plan.track.density_cm3(steps - 1),
        },
        local: LocalInfo {
            transitions: tables.tables().len(),
            rate_values: 2 * (tables.tables().len() * steps) as u64,
            approximate,
            beyond_source,
            ground_excitation_start_per_s: ground_excitation.0,
            ground_excitation_end_per_s: ground_excitation.1,
        },
        solves,
        server_check: check,
        checksum: ChecksumInfo {
            method: CHECKSUM_METHOD.into(),
            values: rates_digest.values() + solves_digest.values(),
            local_rates,
            server_solves,
            all,
        },
        timing: TimingInfo {
            fetch_s: fetch.as_secs_f64(),
            local_evaluation_s: local_time.as_secs_f64(),
            server_calls_s: server_time.as_secs_f64(),
            total_s: total.as_secs_f64(),
        },
        cautions: tables.cautions().to_vec(),
    })
}

/// A table file must hold the species and dataset the job was asked for (and the pinned hash).
fn check_file_matches_plan(plan: &JobPlan, tables: &LocalTables) -> Result<(), JobError> {
    let stamp = tables.stamp();
    let wanted = &plan.dataset;
    let mismatch = |what: &str, got: &str, expected: &str| {
        Err(JobError::from(ratewell_client::ClientError::StampMismatch {
            operation: "table file",
            message: format!("the file holds {what} {got:?}, the job asked for {expected:?}"),
        }))
    };
    if tables.species() != plan.species {
        return mismatch("species", tables.species(), &plan.species);
    }
    if stamp.id != wanted.id() {
        return mismatch("dataset", &stamp.id, wanted.id());
    }
    if let Some(version) = wanted.version()
        && stamp.version != version
    {
        return mismatch("dataset version", &stamp.version, version);
    }
    if let Some(pin) = wanted.pinned_content_hash()
        && !stamp.content_hash.eq_ignore_ascii_case(pin)
    {
        return mismatch("content hash", &stamp.content_hash, pin);
    }
    Ok(())
}

/// A progress line on standard error, unless the plan is quiet.
fn progress(plan: &JobPlan, line: std::fmt::Arguments<'_>) {
    if !plan.quiet {
        eprintln!("{line}");
    }
}

/// Rows (in the tables' order) of transitions out of the ground level (lower level 1).
fn ground_rows(tables: &LocalTables) -> Vec<usize> {
    tables
        .tables()
        .iter()
        .enumerate()
        .filter(|(_, t)| t.header().lower == 1)
        .map(|(i, _)| i)
        .collect()
}

/// Total collisional excitation rate out of the ground level, n_e sum_u q_1u, s^-1, from
/// excitation rate coefficients (cm^3 s^-1) at one temperature, one per table row.
fn ground_excitation_per_s(rows: &[usize], excitation_cm3_s: &[f64], ne_cm3: f64) -> f64 {
    ne_cm3 * rows.iter().map(|&r| excitation_cm3_s[r]).sum::<f64>()
}

fn count_flag(values: &[u32], bit: u32) -> u64 {
    values.iter().filter(|&&f| f & bit != 0).count() as u64
}

/// Compares a server lookup at one temperature with the local values at that temperature
/// (`local` rows in the order of `local_index`): (numbers compared, numbers whose bits differ).
/// A transition on one side only counts as three differing numbers.
fn compare_bits(
    lookup: &RateLookup,
    local_index: &HashMap<Transition, usize>,
    local: &RateBuffers,
) -> (u64, u64) {
    let rows = local_index.len().max(lookup.transitions.len()) as u64;
    if lookup.temperature_count != 1 || local.temperature_count != 1 {
        return (3 * rows, 3 * rows);
    }
    let mut differing = 0u64;
    let mut matched = 0u64;
    for (row, t) in lookup.transitions.iter().enumerate() {
        let Some(&i) = local_index.get(t) else {
            continue;
        };
        matched += 1;
        let pairs = [
            (lookup.excitation.get(row), local.excitation.get(i)),
            (lookup.deexcitation.get(row), local.deexcitation.get(i)),
        ];
        for (a, b) in pairs {
            if !matches!((a, b), (Some(a), Some(b)) if a.to_bits() == b.to_bits()) {
                differing += 1;
            }
        }
        if lookup.flags.get(row) != local.flags.get(i) {
            differing += 1;
        }
    }
    (3 * rows, differing + 3 * (rows - matched))
}

/// Adds every number of a population answer (not its cautions) to `digest`.
fn digest_solve(digest: &mut NumberDigest, answer: &pb::SolvePopulationsResponse) {
    for p in &answer.points {
        digest.add_f64s(&[p.temperature_k, p.density_per_cm3, p.radiated_power, p.residual]);
        digest.add_f64s(&p.fractions);
        digest.add_u32s(&[p.flags]);
        for line in &p.lines {
            let key = line.key.unwrap_or_default();
            digest.add_u32s(&[key.upper, key.lower]);
            digest.add_f64s(&[line.wavelength_vacuum_angstrom, line.emissivity]);
        }
    }
    digest.add_u32s(&[answer.level_count]);
    digest.add_f64s(&answer.critical_densities_per_cm3);
}

/// The summary line of a one-point population answer.
fn solve_info(step: usize, answer: &pb::SolvePopulationsResponse) -> Result<SolveInfo, JobError> {
    let bad = |message: String| JobError::Answer {
        operation: "SolvePopulations",
        message,
    };
    let point = answer
        .points
        .first()
        .ok_or_else(|| bad(format!("step {step}: no population point in the answer")))?;
    let ground_fraction = *point
        .fractions
        .first()
        .ok_or_else(|| bad(format!("step {step}: the population point has no levels")))?;
    let strongest_line = point
        .lines
        .iter()
        .max_by(|a, b| a.emissivity.total_cmp(&b.emissivity))
        .map(|l| {
            let key = l.key.unwrap_or_default();
            LineInfo {
                transition: format!("{}-{}", key.upper, key.lower),
                wavelength_vacuum_angstrom: l.wavelength_vacuum_angstrom,
                emissivity_per_ion_w: l.emissivity,
            }
        });
    Ok(SolveInfo {
        step,
        temperature_k: point.temperature_k,
        density_cm3: point.density_per_cm3,
        ground_fraction,
        radiated_power_per_ion_w: point.radiated_power,
        strongest_line,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratewell_client::RateUnit;

    fn transitions() -> Vec<Transition> {
        vec![
            "2-1".parse().unwrap(),
            "3-1".parse().unwrap(),
            "3-2".parse().unwrap(),
        ]
    }

    /// Local buffers for three transitions at one temperature (invented numbers).
    fn local() -> RateBuffers {
        let mut b = RateBuffers::default();
        b.excitation = vec![1.0e-9, 2.0e-10, 3.0e-11];
        b.deexcitation = vec![4.0e-9, 5.0e-10, 6.0e-11];
        b.flags = vec![0, flags::APPROXIMATE, 0];
        b.temperature_count = 1;
        b
    }

    fn lookup(order: [usize; 3]) -> RateLookup {
        let l = local();
        let t = transitions();
        RateLookup {
            stamp: pb::DatasetStamp::default(),
            species: "X".into(),
            transitions: order.iter().map(|&i| t[i]).collect(),
            temperature_count: 1,
            rate_unit: RateUnit::CubicCentimetrePerSecond,
            excitation: order.iter().map(|&i| l.excitation[i]).collect(),
            deexcitation: order.iter().map(|&i| l.deexcitation[i]).collect(),
            flags: order.iter().map(|&i| l.flags[i]).collect(),
            cautions: vec![],
        }
    }

    fn index() -> HashMap<Transition, usize> {
        transitions()
            .into_iter()
            .enumerate()
            .map(|(i, t)| (t, i))
            .collect()
    }

    // The contract's bit-for-bit rule (one evaluation rule for server and client): the check counts a
    // difference of one unit in the last place, matches rows by transition, not position, and
    // counts a transition missing from one side.
    #[test]
    fn the_bit_check_matches_by_transition_and_sees_one_ulp() {
        assert_eq!(compare_bits(&lookup([0, 1, 2]), &index(), &local()), (9, 0));
        assert_eq!(compare_bits(&lookup([2, 0, 1]), &index(), &local()), (9, 0));
        let mut nudged = lookup([0, 1, 2]);
        nudged.deexcitation[1] = f64::from_bits(nudged.deexcitation[1].to_bits() + 1);
        nudged.flags[2] = flags::OUTSIDE_GRID;
        assert_eq!(compare_bits(&nudged, &index(), &local()), (9, 2));
        let mut short = lookup([0, 1, 2]);
        short.transitions.pop();
        short.excitation.pop();
        short.deexcitation.pop();
        short.flags.pop();
        assert_eq!(compare_bits(&short, &index(), &local()), (9, 3));
    }

    // Collisional excitation rate per ion is n_e q_lu (Osterbrock & Ferland 2006, "Astrophysics
    // of Gaseous Nebulae and Active Galactic Nuclei", ch. 3; from memory), summed over upper
    // levels for the total out of the ground level.
    #[test]
    fn ground_excitation_sums_n_e_q_over_ground_transitions() {
        let l = local();
        let rate = ground_excitation_per_s(&[0, 1], &l.excitation, 1.0e4);
        assert!((rate - 1.0e4 * (1.0e-9 + 2.0e-10)).abs() <= 1e-15 * rate);
        assert_eq!(count_flag(&l.flags, flags::APPROXIMATE), 1);
    }

    #[test]
    fn a_population_answer_is_summarised_and_an_empty_one_refused() {
        let line = |upper, lower, emissivity| pb::LineEmission {
            key: Some(pb::TransitionKey { upper, lower }),
            wavelength_vacuum_angstrom: 5000.0,
            emissivity,
        };
        let answer = pb::SolvePopulationsResponse {
            points: vec![pb::PopulationPoint {
                temperature_k: 1.0e4,
                density_per_cm3: 1.0e8,
                fractions: vec![0.9, 0.1],
                lines: vec![line(2, 1, 1.0e-21), line(3, 1, 4.0e-21), line(3, 2, 2.0e-21)],
                radiated_power: 7.0e-21,
                residual: 0.0,
                flags: 0,
            }],
            level_count: 2,
            ..Default::default()
        };
        let s = solve_info(5, &answer).unwrap();
        assert_eq!((s.step, s.ground_fraction), (5, 0.9));
        assert_eq!(s.strongest_line.unwrap().transition, "3-1");
        let mut d1 = NumberDigest::new("s");
        let mut d2 = NumberDigest::new("s");
        digest_solve(&mut d1, &answer);
        let mut changed = answer.clone();
        changed.points[0].fractions[1] = 0.1000000000000001;
        digest_solve(&mut d2, &changed);
        assert_ne!(d1.hex(), d2.hex());
        let empty = pb::SolvePopulationsResponse::default();
        let e = solve_info(3, &empty).unwrap_err().to_string();
        assert_eq!(e, "SolvePopulations: step 3: no population point in the answer");
    }
}
