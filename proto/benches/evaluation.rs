//! Evaluation-rule benchmarks: one value, batches of temperatures on one table, located batches
//! over many tables (the client's and server's lookup pattern), and many tables at one
//! temperature (the population-solve pattern). Tables are invented smooth curves.
#![allow(missing_docs)] // criterion's macros generate undocumented public items

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use ratewell_proto::rule::{
    Direction, LogGrid, OutsidePolicy, RateOutputs, RateTable, TableHeader, Threads, checked_location,
    write_rows, write_tables_at,
};
use std::hint::black_box;
use std::time::Duration;

/// An invented table: smooth ln Upsilon on a 64-knot grid from 10^1.7 K to 10^8 K.
fn table(seed: usize) -> RateTable {
    let grid = LogGrid::new(1.7, 0.1, 64).unwrap();
    let s = seed as f64;
    let y = (0..grid.knots())
        .map(|i| -1.0 + 0.4 * (0.11 * i as f64 + 0.37 * s).sin() + 0.01 * i as f64)
        .collect();
    let header = TableHeader {
        upper: 2 + (seed as u32 % 50),
        lower: 1,
        g_lower: 2.0,
        g_upper: 4.0 + (seed % 3) as f64,
        excitation_energy_k: 1.0e4 + 37.0 * s,
        source_t_min_k: 1.0e3,
        source_t_max_k: 1.0e6,
        approximate: false,
    };
    RateTable::from_knots(header, grid, y).unwrap()
}

/// `n` temperatures spread in log T over the grid, sorted.
fn temperatures(n: usize) -> Vec<f64> {
    (0..n)
        .map(|j| 10f64.powf(1.75 + 6.2 * (j as f64 + 0.5) / n as f64))
        .collect()
}

fn scalar(c: &mut Criterion) {
    let t = table(1);
    let temps = temperatures(64);
    let mut g = c.benchmark_group("rule/scalar");
    g.throughput(Throughput::Elements(temps.len() as u64));
    g.bench_function("evaluate", |b| {
        b.iter(|| {
            for &tk in &temps {
                black_box(t.evaluate(black_box(tk), OutsidePolicy::Refuse).unwrap());
            }
        })
    });
    g.finish();
}

fn batched(c: &mut Criterion) {
    let t = table(1);
    let mut g = c.benchmark_group("rule/evaluate_into");
    for n in [16usize, 256, 4096, 65_536] {
        let temps = temperatures(n);
        let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
        g.throughput(Throughput::Elements(n as u64));
        for (name, dir) in [
            ("deexcitation", Direction::Deexcitation),
            ("both", Direction::Both),
        ] {
            g.bench_with_input(BenchmarkId::new(name, n), &n, |b, _| {
                b.iter(|| {
                    let mut out = RateOutputs::new(dir, &mut e, &mut d, &mut f).unwrap();
                    t.evaluate_into(black_box(&temps), OutsidePolicy::Refuse, &mut out)
                        .unwrap();
                })
            });
        }
    }
    g.finish();
}

fn located(c: &mut Criterion) {
    // The client and server pattern: temperatures located once, then every table written.
    let tables: Vec<RateTable> = (0..200).map(table).collect();
    let n = 1000;
    let temps = temperatures(n);
    let grid = *tables[0].grid();
    let locs: Vec<_> = temps
        .iter()
        .enumerate()
        .map(|(j, &t)| checked_location(&grid, j, t, OutsidePolicy::Refuse).unwrap())
        .collect();
    let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
    let mut g = c.benchmark_group("rule/write_at");
    g.throughput(Throughput::Elements((tables.len() * n) as u64));
    g.bench_function("200_tables_x_1000_temperatures", |b| {
        b.iter(|| {
            for t in &tables {
                let mut out = RateOutputs::new(Direction::Deexcitation, &mut e, &mut d, &mut f).unwrap();
                for (j, loc) in locs.iter().enumerate() {
                    t.write_at(loc, j, &mut out).unwrap();
                }
                black_box(&d);
            }
        })
    });
    g.finish();

    let mut g = c.benchmark_group("rule/write_located");
    g.throughput(Throughput::Elements((tables.len() * n) as u64));
    for (name, dir) in [
        ("deexcitation", Direction::Deexcitation),
        ("both", Direction::Both),
    ] {
        g.bench_function(BenchmarkId::new(name, "200_tables_x_1000_temperatures"), |b| {
            b.iter(|| {
                for t in &tables {
                    let mut out = RateOutputs::new(dir, &mut e, &mut d, &mut f).unwrap();
                    t.write_located(&locs, &mut out).unwrap();
                    black_box(&d);
                }
            })
        });
    }
    g.finish();

    let mut g = c.benchmark_group("rule/write_rows");
    g.throughput(Throughput::Elements((tables.len() * n) as u64));
    let rows: Vec<&RateTable> = tables.iter().collect();
    let total = rows.len() * n;
    let (mut re, mut rd, mut rf) = (vec![0.0; total], vec![0.0; total], vec![0u32; total]);
    g.bench_function("both/200_tables_x_1000_temperatures", |b| {
        b.iter(|| {
            let mut out = RateOutputs::new(Direction::Both, &mut re, &mut rd, &mut rf).unwrap();
            write_rows(&rows, &locs, Threads::Caller, &mut out).unwrap();
            black_box(&rd);
        })
    });
    g.finish();

    let mut g = c.benchmark_group("rule/one_temperature");
    g.throughput(Throughput::Elements(tables.len() as u64));
    let loc = grid.locate(1.234e4);
    g.bench_function("evaluate_at_200_tables", |b| {
        b.iter(|| {
            for t in &tables {
                black_box(t.evaluate_at(black_box(&loc)));
            }
        })
    });
    let count = tables.len();
    let (mut te, mut td, mut tf) = (vec![0.0; count], vec![0.0; count], vec![0u32; count]);
    g.bench_function("write_tables_at_200_tables", |b| {
        b.iter(|| {
            let mut out = RateOutputs::new(Direction::Both, &mut te, &mut td, &mut tf).unwrap();
            write_tables_at(&tables, black_box(&loc), &mut out).unwrap();
            black_box(&td);
        })
    });
    g.finish();
}

fn elementary(c: &mut Criterion) {
    // The rule's own exponential against the platform library's, over a block of values
    // (compiled for the baseline target, so 2-wide SIMD for the rule's; no AVX2 dispatch here).
    let xs: Vec<f64> = (0..4096).map(|i| -30.0 + 25.0 * i as f64 / 4096.0).collect();
    let mut out = vec![0.0; xs.len()];
    let mut g = c.benchmark_group("rule/elementary");
    g.throughput(Throughput::Elements(xs.len() as u64));
    g.bench_function("rule_exp", |b| {
        b.iter(|| {
            for (o, &x) in out.iter_mut().zip(black_box(&xs)) {
                *o = ratewell_proto::rule::exp(x);
            }
            black_box(&out);
        })
    });
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        g.bench_function("rule_exp_avx2", |b| {
            b.iter(|| {
                // SAFETY: the processor has AVX2 (checked above).
                unsafe { exp_block_avx2(black_box(&xs), &mut out) };
                black_box(&out);
            })
        });
    }
    g.bench_function("platform_exp", |b| {
        b.iter(|| {
            for (o, &x) in out.iter_mut().zip(black_box(&xs)) {
                *o = x.exp();
            }
            black_box(&out);
        })
    });
    g.finish();
}

/// The rule's exponential over a block, compiled for AVX2 as the rule's batched kernel is.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn exp_block_avx2(xs: &[f64], out: &mut [f64]) {
    for (o, &x) in out.iter_mut().zip(xs) {
        *o = ratewell_proto::rule::exp(x);
    }
}

fn config() -> Criterion {
    Criterion::default()
        .sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2))
}

criterion_group! {
    name = benches;
    config = config();
    targets = scalar, batched, located, elementary
}
criterion_main!(benches);
