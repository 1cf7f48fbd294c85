//! Benchmark driver for the parts measured inside the service crate (run by
//! `scripts/perf/compare.sh`; not part of the server): writes the INVENTED benchmark datasets
//! to disk for the server, times table precompute for the 300-level / 44,850-transition
//! dataset, times population solves per point for N = 5, 20, 50, 200, and writes the rate
//! matrices it solved so the numpy baseline assembles and solves exactly the same systems.
//! Results go to `<out>/core.json`.

#[path = "../../benches/common/synthetic.rs"]
#[allow(dead_code)]
mod synthetic;

use clap::Parser;
use ratewell_service::dataset::{Dataset, load_dataset_from_texts};
use ratewell_service::engine::solve::SolveQuery;
use ratewell_service::engine::{Engine, EngineConfig, GridSpec, Selector};
use ratewell_service::physics::populations::{CollisionalRate, PopulationWorkspace};
use ratewell_service::tables::build_species_tables;
use serde_json::{Value, json};
use std::hint::black_box;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

/// Level counts of the population-solve comparison.
const SOLVE_LEVELS: [usize; 4] = [5, 20, 50, 200];
/// Levels of the large precompute dataset (all pairs coupled: 44,850 transitions).
const LARGE_LEVELS: usize = 300;
/// Levels of the evaluation dataset served for the client comparison (2,016 transitions).
const EVAL_LEVELS: usize = 64;

#[derive(Parser)]
#[command(about = "ratewell service-side benchmark driver (writes <out>/core.json)")]
struct Args {
    /// Folder for results, the datasets (under data/) and the solve matrices (under solve/).
    #[arg(long)]
    out: PathBuf,
    /// Fewer repetitions, for checking that the harness runs.
    #[arg(long)]
    quick: bool,
    /// Only time precompute, for a species of this many levels (for profiling).
    #[arg(long)]
    precompute_only: Option<usize>,
    /// Only time population solves, for this one level count of the comparison (5, 20, 50
    /// or 200; for profiling).
    #[arg(long)]
    solve_only: Option<usize>,
}

fn main() -> ExitCode {
    // The same allocator settings as the server, so solves are measured as served.
    ratewell_service::memory::tune_allocator();
    let args = Args::parse();
    match run(&args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("ratewell-bench-core: {e}");
            ExitCode::FAILURE
        }
    }
}

type Failure = Box<dyn std::error::Error>;

fn run(args: &Args) -> Result<(), Failure> {
    std::fs::create_dir_all(&args.out)?;
    let reps = if args.quick { 1 } else { 3 };
    // Solves are short: the best of as many runs as the numpy baseline takes (5).
    let solve_reps = if args.quick { 1 } else { 5 };
    if let Some(levels) = args.precompute_only {
        let files = synthetic::dataset_files("bench-large", &[levels], synthetic::Mix::default());
        eprintln!("precompute: {}", measure_precompute(&files, reps)?);
        return Ok(());
    }
    if let Some(levels) = args.solve_only {
        if !SOLVE_LEVELS.contains(&levels) {
            return Err(format!("--solve-only {levels}: must be one of {SOLVE_LEVELS:?}").into());
        }
        measure_solves(&args.out.join("solve"), &[levels], solve_reps, args.quick)?;
        return Ok(());
    }
    let data_dir = args.out.join("data");
    write_dataset(&data_dir.join("bench-eval"), "bench-eval", &[EVAL_LEVELS])?;
    eprintln!("wrote {}", data_dir.join("bench-eval").display());
    let large_files = synthetic::dataset_files("bench-large", &[LARGE_LEVELS], synthetic::Mix::default());
    write_files(&data_dir.join("bench-large"), &large_files)?;
    eprintln!("wrote {}", data_dir.join("bench-large").display());

    let precompute = measure_precompute(&large_files, reps)?;
    eprintln!("precompute: {precompute}");
    let solves = measure_solves(&args.out.join("solve"), &SOLVE_LEVELS, solve_reps, args.quick)?;
    let report = json!({
        "machine": machine(),
        "precompute": precompute,
        "solves": solves,
        "data_dir": data_dir,
    });
    let path = args.out.join("core.json");
    std::fs::write(&path, serde_json::to_string_pretty(&report)?)?;
    eprintln!("wrote {}", path.display());
    Ok(())
}

fn write_files(dir: &Path, files: &[(String, String)]) -> Result<(), Failure> {
    std::fs::create_dir_all(dir)?;
    for (name, text) in files {
        std::fs::write(dir.join(name), text)?;
    }
    Ok(())
}

fn write_dataset(dir: &Path, id: &str, levels: &[usize]) -> Result<(), Failure> {
    write_files(
        dir,
        &synthetic::dataset_files(id, levels, synthetic::Mix::default()),
    )
}

fn load(files: &[(String, String)]) -> Result<Dataset, Failure> {
    let refs: Vec<(&str, &str)> = files.iter().map(|(n, t)| (n.as_str(), t.as_str())).collect();
    Ok(load_dataset_from_texts(&refs)?)
}

/// Loading (parse, validate, hash) and table building for the large dataset on the benchmark
/// grid, 1e3-1e8 K at 20 points per decade; the best of `reps` builds.
fn measure_precompute(files: &[(String, String)], reps: usize) -> Result<Value, Failure> {
    let started = Instant::now();
    let dataset = load(files)?;
    let load_s = started.elapsed().as_secs_f64();
    let species = &dataset.species[0];
    let grid = GridSpec {
        t_min_k: 1e3,
        t_max_k: 1e8,
        points_per_decade: 20,
    }
    .to_grid()?;
    let mut best = f64::INFINITY;
    let mut tables = 0;
    let mut max_error: f64 = 0.0;
    for _ in 0..reps {
        let started = Instant::now();
        let built = build_species_tables(species, grid)?;
        best = best.min(started.elapsed().as_secs_f64());
        tables = built.tables.len();
        max_error = built.max_interpolation_error();
    }
    Ok(json!({
        "levels": species.levels.len(),
        "transitions": tables,
        "knots": grid.knots(),
        "load_seconds": load_s,
        "build_seconds": best,
        "max_interpolation_error": max_error,
        "threads": rayon_threads(),
    }))
}

fn rayon_threads() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}

fn selector() -> Selector {
    Selector {
        id: "bench-solve".into(),
        version: None,
        expected_hash: None,
    }
}

/// Temperatures and densities of the solve comparison for `levels` levels.
fn solve_points(levels: usize, quick: bool) -> (Vec<f64>, Vec<f64>) {
    let temps: Vec<f64> = (0..8).map(|i| 5.0e3 * 1.35f64.powi(i)).collect();
    let n_d = match (levels, quick) {
        (_, true) => 4,
        (n, _) if n >= 200 => 16,
        (n, _) if n >= 50 => 64,
        _ => 256,
    };
    let dens = (0..n_d)
        .map(|i| 10f64.powf(2.0 + 6.0 * i as f64 / (n_d - 1) as f64))
        .collect();
    (temps, dens)
}

/// Solves per point through the engine (rates from tables, populations, lines, critical
/// densities, parallel over temperatures) and through the physics workspace alone (assembly,
/// LU, refinement; one thread). Writes A and q matrices for the numpy baseline.
fn measure_solves(dir: &Path, levels: &[usize], reps: usize, quick: bool) -> Result<Value, Failure> {
    std::fs::create_dir_all(dir)?;
    let files = synthetic::dataset_files("bench-solve", &SOLVE_LEVELS, synthetic::Mix::default());
    // Solves run in-process and no answer is encoded, so the wire's answer-size limit (which
    // 128 points of a 200-level species with every line reported would pass) does not apply.
    let engine = Engine::new(EngineConfig {
        max_answer_bytes: 1 << 30,
        ..EngineConfig::default()
    });
    engine.install(load(&files)?)?;
    let loaded = engine.select(&selector())?;
    let mut rows = Vec::new();
    for (charge, &n) in SOLVE_LEVELS.iter().enumerate() {
        if !levels.contains(&n) {
            continue;
        }
        let name = synthetic::species_name(charge as u32);
        let (temps, dens) = solve_points(n, quick);
        let points = temps.len() * dens.len();
        let query = SolveQuery::grid(selector(), name.clone(), temps.clone(), dens.clone());
        black_box(engine.solve(&query)?);
        let mut engine_best = f64::INFINITY;
        for _ in 0..reps {
            let started = Instant::now();
            black_box(engine.solve(&query)?);
            engine_best = engine_best.min(started.elapsed().as_secs_f64());
        }

        // The same systems through the workspace alone, with the rates written for numpy.
        let tables = &loaded.tables[&name];
        let inputs = &loaded.solve_inputs[&name];
        let mut a = vec![0.0; n * n];
        for r in &inputs.radiative {
            a[r.upper * n + r.lower] += r.a_s;
        }
        let mut q_all = Vec::with_capacity(temps.len() * n * n);
        let mut rates_per_t = Vec::new();
        for &t in &temps {
            let loc = tables.grid.locate(t);
            let mut q = vec![0.0; n * n];
            let rates: Vec<CollisionalRate> = tables
                .tables
                .iter()
                .map(|tab| {
                    let v = tab.evaluate_at(&loc);
                    let (u, l) = (tab.header().upper as usize - 1, tab.header().lower as usize - 1);
                    q[l * n + u] += v.excitation_cm3_s;
                    q[u * n + l] += v.deexcitation_cm3_s;
                    CollisionalRate {
                        upper: u,
                        lower: l,
                        excitation_cm3_s: v.excitation_cm3_s,
                        deexcitation_cm3_s: v.deexcitation_cm3_s,
                    }
                })
                .collect();
            q_all.extend_from_slice(&q);
            rates_per_t.push(rates);
        }
        let mut ws = PopulationWorkspace::new(n)?;
        let mut ws_best = f64::INFINITY;
        let mut check = Vec::new();
        for _ in 0..reps {
            let started = Instant::now();
            check.clear();
            for rates in &rates_per_t {
                ws.set_rates(&inputs.radiative, rates)?;
                for &ne in &dens {
                    check.push(ws.solve(ne)?.fractions[n - 1]);
                }
            }
            ws_best = ws_best.min(started.elapsed().as_secs_f64());
        }
        let stem = format!("n{n}");
        write_f64(&dir.join(format!("{stem}_a.f64")), &a)?;
        write_f64(&dir.join(format!("{stem}_q.f64")), &q_all)?;
        write_f64(&dir.join(format!("{stem}_check.f64")), &check)?;
        eprintln!(
            "solve N={n}: engine {:.2} us/point, workspace {:.2} us/point ({points} points)",
            engine_best / points as f64 * 1e6,
            ws_best / points as f64 * 1e6
        );
        rows.push(json!({
            "levels": n,
            "transitions": tables.tables.len(),
            "temperatures_k": temps,
            "densities_cm3": dens,
            "points": points,
            "engine_seconds_per_point": engine_best / points as f64,
            "workspace_seconds_per_point": ws_best / points as f64,
            "a_file": format!("{stem}_a.f64"),
            "q_file": format!("{stem}_q.f64"),
            "check_file": format!("{stem}_check.f64"),
        }));
    }
    Ok(json!({ "dir": dir, "rows": rows }))
}

/// Little-endian f64 values, for numpy.fromfile.
fn write_f64(path: &Path, values: &[f64]) -> Result<(), Failure> {
    let bytes: Vec<u8> = values.iter().flat_map(|v| v.to_le_bytes()).collect();
    std::fs::write(path, bytes)?;
    Ok(())
}

/// What machine this ran on, for the results table.
fn machine() -> Value {
    let cpu = std::fs::read_to_string("/proc/cpuinfo")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("model name"))
                .map(|l| l.split(':').nth(1).unwrap_or("").trim().to_string())
        })
        .unwrap_or_else(|| "unknown".into());
    let load = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    json!({ "cores": rayon_threads(), "cpu": cpu, "loadavg_at_start": load.trim() })
}
