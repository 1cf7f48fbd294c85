//! Evaluation through the C ABI against the Rust library, per value, one thread each (the
//! library starts no threads). INVENTED smooth tables (no atomic data): 500 transitions on a
//! 1e3..1e8 K grid (20 per decade) at 1,000 temperatures. Target: the C ABI within 10 % of
//! the Rust library.
#![allow(missing_docs)] // criterion's macros generate undocumented public items

use criterion::{Criterion, Throughput, criterion_group, criterion_main};
use ratewell::*;
use ratewell_bench::invented;
use ratewell_client::EvalOptions;
use std::ffi::CString;
use std::hint::black_box;

fn abi_vs_rust(c: &mut Criterion) {
    let tables = invented::transitions(500);
    let dir = std::env::temp_dir().join(format!("ratewell-bench-abi-{}", std::process::id()));
    let path = tables.save(&dir).unwrap();
    let c_path = CString::new(path.to_str().unwrap()).unwrap();
    let mut handle = std::ptr::null_mut();
    // SAFETY: valid string and out pointer.
    assert_eq!(
        unsafe { ratewell_tables_load(c_path.as_ptr(), &mut handle) },
        RATEWELL_OK
    );
    let temps: Vec<f64> = (0..1_000)
        .map(|i| 1.2e3 * 10f64.powf(i as f64 * 0.0049))
        .collect();
    let n = tables.tables().len() * temps.len();
    let (mut e, mut d, mut f) = (vec![0.0; n], vec![0.0; n], vec![0u32; n]);
    let mut group = c.benchmark_group("evaluate_500x1000_1_thread");
    group.throughput(Throughput::Elements(n as u64));
    group.bench_function("rust_library", |b| {
        b.iter(|| {
            tables
                .evaluate_to_slices(&[], &temps, EvalOptions::default(), &mut e, &mut d, &mut f)
                .unwrap();
            black_box(&e);
        })
    });
    group.bench_function("c_abi", |b| {
        b.iter(|| {
            // SAFETY: arrays of `n` values; live handle.
            let s = unsafe {
                ratewell_tables_evaluate(
                    handle,
                    std::ptr::null(),
                    std::ptr::null(),
                    0,
                    temps.as_ptr(),
                    temps.len(),
                    RATEWELL_KELVIN,
                    RATEWELL_CM3_PER_S,
                    RATEWELL_REFUSE,
                    e.as_mut_ptr(),
                    d.as_mut_ptr(),
                    f.as_mut_ptr(),
                    n,
                )
            };
            assert_eq!(s, RATEWELL_OK);
            black_box(&e);
        })
    });
    group.finish();
    // SAFETY: handle from the library, freed once.
    unsafe { ratewell_tables_free(handle) };
    std::fs::remove_dir_all(&dir).unwrap();
}

criterion_group!(benches, abi_vs_rust);
criterion_main!(benches);
