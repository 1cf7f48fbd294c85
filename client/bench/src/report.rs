//! `ratewell-bench report`: every comparison as a ratio with its target and PASS or FALL SHORT,
//! printed and written to `results.json` and `results.md`, plus the plot.

use super::measure::Failure;
use super::plot;
use serde_json::{Value, json};
use std::fmt::Write;
use std::path::Path;

/// One line of the results table.
struct Row {
    what: String,
    ratewell: String,
    baseline: String,
    ratio: String,
    target: String,
    /// `None`: shown for information, no target.
    pass: Option<bool>,
}

fn read(path: &Path) -> Result<Value, Failure> {
    let text = std::fs::read_to_string(path).map_err(|e| format!("cannot read {}: {e}", path.display()))?;
    Ok(serde_json::from_str(&text).map_err(|e| format!("{}: {e}", path.display()))?)
}

fn num(v: &Value, pointer: &str) -> Result<f64, Failure> {
    v.pointer(pointer)
        .and_then(Value::as_f64)
        .ok_or_else(|| format!("missing number {pointer}").into())
}

/// "3.20x faster" or "0.80x (slower)".
fn speedup(baseline_s: f64, ours_s: f64) -> String {
    let r = baseline_s / ours_s;
    if r >= 1.0 {
        format!("{r:.2}x faster")
    } else {
        format!("{r:.2}x (slower)")
    }
}

fn fmt_ns(s: f64) -> String {
    format!("{:.2} ns", s * 1e9)
}

fn fmt_us(s: f64) -> String {
    if s >= 1e-3 {
        format!("{:.2} ms", s * 1e3)
    } else {
        format!("{:.1} us", s * 1e6)
    }
}

/// The language bindings: the C ABI and the Python package against the Rust library on the
/// same 1e6 values, numpy.interp on the same tables, and loading a table file; one thread each.
fn binding_rows(rust: &Value, py: &Value) -> Result<Vec<Row>, Failure> {
    let mut rows = Vec::new();
    let Some(b) = rust.get("bindings") else {
        return Ok(rows);
    };
    let ours = num(b, "/rust_seconds_per_value")?;
    let abi = num(b, "/c_abi_seconds_per_value")?;
    let same = b.pointer("/c_abi_bit_identical").and_then(Value::as_bool) == Some(true);
    rows.push(Row {
        what: format!(
            "C ABI (ratewell_tables_evaluate) vs the Rust library, 1e6 values, one thread each{}",
            if same { ", same bits" } else { ", BITS DIFFER" }
        ),
        ratewell: fmt_ns(abi),
        baseline: fmt_ns(ours),
        ratio: format!("{:.3}x the Rust time", abi / ours),
        target: "<= 1.10x".into(),
        pass: Some(same && abi / ours <= 1.10),
    });
    if let (Ok(package), Ok(interp)) = (
        num(py, "/bindings/package_seconds_per_value"),
        num(py, "/bindings/interp_seconds_per_value"),
    ) {
        let same = py
            .pointer("/bindings/package_bit_identical_to_rust")
            .and_then(Value::as_bool)
            == Some(true);
        rows.push(Row {
            what: format!(
                "Python package (numpy arrays) vs the Rust library, 1e6 values, one thread each{}",
                if same { ", same bits" } else { ", BITS DIFFER" }
            ),
            ratewell: fmt_ns(package),
            baseline: fmt_ns(ours),
            ratio: format!("{:.2}x the Rust time", package / ours),
            target: "<= 1.5x".into(),
            pass: Some(same && package / ours <= 1.5),
        });
        rows.push(Row {
            what: "Python package vs numpy.interp (log-log) on the same tables, 1e6 values, one thread each"
                .into(),
            ratewell: fmt_ns(package),
            baseline: fmt_ns(interp),
            ratio: speedup(interp, package),
            target: ">= 3x faster".into(),
            pass: Some(interp / package >= 3.0),
        });
    }
    let load = num(b, "/table_file_load/load_seconds")?;
    rows.push(Row {
        what: format!(
            "table file load (read, checksum, decode, digest check), {} levels / {} tables, {:.0} MB, one thread",
            num(b, "/table_file_load/levels")?,
            num(b, "/table_file_load/tables")?,
            num(b, "/table_file_load/file_bytes")? / 1e6
        ),
        ratewell: fmt_us(load),
        baseline: "-".into(),
        ratio: "-".into(),
        target: "< 50 ms".into(),
        pass: Some(load < 0.05),
    });
    Ok(rows)
}

/// Builds the table, prints it and writes the results and the plot into `work`.
pub(crate) fn run(work: &Path, command_line: &str) -> Result<(), Failure> {
    let core = read(&work.join("core.json"))?;
    let rust = read(&work.join("rust.json"))?;
    let py = read(&work.join("python.json"))?;
    let mut rows = Vec::new();

    // Local evaluation against numpy.interp (linear, log-log) and scipy CubicSpline.
    let client_ns = num(&rust, "/evaluation/client_ns_per_value")? * 1e-9;
    let kernel_ns = num(&rust, "/evaluation/kernel_ns_per_value")? * 1e-9;
    let interp = num(&py, "/evaluation/interp_seconds_per_value")?;
    let spline = num(&py, "/evaluation/cubic_spline_seconds_per_value")?;
    let shape = "2,000 tables x 64 knots at 10,000 temperatures, one thread each";
    rows.push(Row {
        what: format!("local evaluation, client library, {shape}: vs numpy.interp (log-log)"),
        ratewell: fmt_ns(client_ns),
        baseline: fmt_ns(interp),
        ratio: speedup(interp, client_ns),
        target: ">= 5x faster".into(),
        pass: Some(interp / client_ns >= 5.0),
    });
    rows.push(Row {
        what: "local evaluation, client library: cost per value".into(),
        ratewell: fmt_ns(client_ns),
        baseline: "-".into(),
        ratio: "-".into(),
        target: "<= 5 ns".into(),
        pass: Some(client_ns <= 5e-9),
    });
    rows.push(Row {
        what: "local evaluation, client library: vs scipy CubicSpline".into(),
        ratewell: fmt_ns(client_ns),
        baseline: fmt_ns(spline),
        ratio: speedup(spline, client_ns),
        target: "(information)".into(),
        pass: None,
    });
    rows.push(Row {
        what: "local evaluation, rule kernel alone (RateTable::write_located) vs numpy.interp".into(),
        ratewell: fmt_ns(kernel_ns),
        baseline: fmt_ns(interp),
        ratio: speedup(interp, kernel_ns),
        target: "(information)".into(),
        pass: None,
    });
    if let (Some(parallel), Some(threads)) = (
        rust.pointer("/evaluation/client_parallel_ns_per_value")
            .and_then(Value::as_f64),
        rust.pointer("/evaluation/parallel_threads")
            .and_then(Value::as_f64),
    ) {
        rows.push(Row {
            what: format!("local evaluation, client library with EvalOptions::parallel, {threads} threads: vs itself on one thread (scaling)"),
            ratewell: fmt_ns(parallel * 1e-9),
            baseline: fmt_ns(client_ns),
            ratio: speedup(client_ns, parallel * 1e-9),
            target: "(information)".into(),
            pass: None,
        });
    }
    rows.extend(binding_rows(&rust, &py)?);

    // Batched lookups against the echo RPC at the same payload size.
    for r in rust
        .pointer("/rpc/rows")
        .and_then(Value::as_array)
        .into_iter()
        .flatten()
    {
        let ratio = num(r, "/throughput_ratio")?;
        rows.push(Row {
            what: format!(
                "batched lookup over gRPC, {} values ({:.1} MB answer): throughput vs echo of the same size",
                num(r, "/values")?,
                num(r, "/response_bytes")? / 1e6
            ),
            ratewell: fmt_us(num(r, "/lookup_seconds")?),
            baseline: fmt_us(num(r, "/echo_seconds")?),
            ratio: format!("{:.0}% of echo", ratio * 100.0),
            target: ">= 50%".into(),
            pass: Some(ratio >= 0.5),
        });
    }

    // Small unary lookups against the empty RPC.
    for r in rust
        .pointer("/latency/rows")
        .and_then(Value::as_array)
        .into_iter()
        .flatten()
    {
        let k = num(r, "/in_flight")?;
        let (l50, p50) = (num(r, "/lookup_p50_seconds")?, num(r, "/ping_p50_seconds")?);
        rows.push(Row {
            what: format!("small unary lookup p50, {k} in flight: vs empty RPC p50"),
            ratewell: fmt_us(l50),
            baseline: fmt_us(p50),
            ratio: format!("{:.2}x", l50 / p50),
            target: "<= 1.3x".into(),
            pass: Some(l50 / p50 <= 1.3),
        });
        let (l99, p99) = (num(r, "/lookup_p99_seconds")?, num(r, "/ping_p99_seconds")?);
        rows.push(Row {
            what: format!("small unary lookup p99, {k} in flight (empty RPC p99 beside it)"),
            ratewell: fmt_us(l99),
            baseline: fmt_us(p99),
            ratio: format!("{:.2}x", l99 / p99),
            target: if k >= 64.0 {
                "< 2 ms".into()
            } else {
                "(information)".into()
            },
            pass: (k >= 64.0).then_some(l99 < 2e-3),
        });
    }

    // Population solves against numpy's stacked solve.
    let py_solves = py
        .pointer("/solves")
        .and_then(Value::as_array)
        .cloned()
        .unwrap_or_default();
    for r in core
        .pointer("/solves/rows")
        .and_then(Value::as_array)
        .into_iter()
        .flatten()
    {
        let n = num(r, "/levels")?;
        let ours = num(r, "/engine_seconds_per_point")?;
        let ws = num(r, "/workspace_seconds_per_point")?;
        let Some(theirs) = py_solves
            .iter()
            .find(|p| p.get("levels").and_then(Value::as_f64) == Some(n))
            .and_then(|p| p.get("seconds_per_point").and_then(Value::as_f64))
        else {
            continue;
        };
        rows.push(Row {
            what: format!("population solve per point, N = {n}: engine (rates, assembly, solve, lines) vs numpy stacked solve (assembly + solve)"),
            ratewell: fmt_us(ours),
            baseline: fmt_us(theirs),
            ratio: speedup(theirs, ours),
            target: ">= 2x faster".into(),
            pass: Some(theirs / ours >= 2.0),
        });
        rows.push(Row {
            what: format!(
                "population solve per point, N = {n}: workspace alone, one thread (assembly + solve)"
            ),
            ratewell: fmt_us(ws),
            baseline: fmt_us(theirs),
            ratio: speedup(theirs, ws),
            target: "(information)".into(),
            pass: None,
        });
    }

    // Precompute, start-up, memory.
    let build = num(&core, "/precompute/build_seconds")?;
    rows.push(Row {
        what: format!(
            "precompute, {} levels / {} transitions, {} knots (1e3-1e8 K, 20 per decade)",
            num(&core, "/precompute/levels")?,
            num(&core, "/precompute/transitions")?,
            num(&core, "/precompute/knots")?
        ),
        ratewell: format!("{build:.2} s"),
        baseline: format!(
            "(parse + validate {:.2} s)",
            num(&core, "/precompute/load_seconds")?
        ),
        ratio: "-".into(),
        target: "< 2 s".into(),
        pass: Some(build < 2.0),
    });
    let ready = num(&rust, "/startup/demo_ready_seconds")?;
    rows.push(Row {
        what: "server start to first answered lookup, demo dataset".into(),
        ratewell: fmt_us(ready),
        baseline: "-".into(),
        ratio: "-".into(),
        target: "< 1 s".into(),
        pass: Some(ready < 1.0),
    });
    let rss = rust.pointer("/memory/server/rss_bytes").and_then(Value::as_f64);
    let tables = rust.pointer("/memory/table_bytes").and_then(Value::as_f64);
    if let (Some(rss), Some(tables)) = (rss, tables) {
        let limit = 1.3 * tables + 50e6;
        rows.push(Row {
            what: "server resident memory with demo + 64-level + 300-level datasets loaded".into(),
            ratewell: format!("{:.0} MB", rss / 1e6),
            baseline: format!("tables {:.0} MB", tables / 1e6),
            ratio: format!("{:.2}x tables", rss / tables),
            target: format!("< 1.3 x tables + 50 MB = {:.0} MB", limit / 1e6),
            pass: Some(rss < limit),
        });
    }

    let date = py
        .pointer("/date")
        .and_then(Value::as_str)
        .unwrap_or("unknown")
        .to_string();
    let machine = core.get("machine").cloned().unwrap_or(Value::Null);
    let versions = py.get("versions").cloned().unwrap_or(Value::Null);
    let markdown = markdown(&rows, &date, &machine, &versions, command_line, &rust);
    print!("{markdown}");
    std::fs::write(work.join("results.md"), &markdown)?;
    let json_rows: Vec<Value> = rows
        .iter()
        .map(|r| {
            json!({
                "what": r.what, "ratewell": r.ratewell, "baseline": r.baseline,
                "ratio": r.ratio, "target": r.target,
                "result": match r.pass { Some(true) => "PASS", Some(false) => "FALL SHORT", None => "-" },
            })
        })
        .collect();
    let results = json!({
        "date": date, "machine": machine, "versions": versions, "command": command_line,
        "rows": json_rows, "core": core, "rust": rust, "python": py,
    });
    std::fs::write(work.join("results.json"), serde_json::to_string_pretty(&results)?)?;
    plot::draw(&work.join("performance.svg"), &rust, &core, &py)?;
    eprintln!(
        "wrote {}, {} and {}",
        work.join("results.md").display(),
        work.join("results.json").display(),
        work.join("performance.svg").display()
    );
    Ok(())
}

fn markdown(
    rows: &[Row],
    date: &str,
    machine: &Value,
    versions: &Value,
    command: &str,
    rust: &Value,
) -> String {
    let mut s = String::new();
    let cores = machine.get("cores").and_then(Value::as_u64).unwrap_or(0);
    let cpu = machine.get("cpu").and_then(Value::as_str).unwrap_or("unknown");
    let load = machine
        .get("loadavg_at_start")
        .and_then(Value::as_str)
        .unwrap_or("?");
    let _ = writeln!(
        s,
        "Measured {date} on {cores} cores ({cpu}; load average at start {load})."
    );
    let _ = writeln!(s, "Command: `{command}`. Baselines: {versions}.");
    let identical = rust
        .pointer("/evaluation/server_and_local_bit_identical")
        .and_then(Value::as_bool)
        .unwrap_or(false);
    let _ = writeln!(
        s,
        "Server lookups and client-local evaluation bit-identical in this run: {identical}.\n"
    );
    let _ = writeln!(
        s,
        "| measurement | ratewell | baseline | ratio | target | result |"
    );
    let _ = writeln!(s, "|---|---|---|---|---|---|");
    for r in rows {
        let result = match r.pass {
            Some(true) => "PASS",
            Some(false) => "FALL SHORT",
            None => "-",
        };
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} | {} | {} |",
            r.what, r.ratewell, r.baseline, r.ratio, r.target, result
        );
    }
    s
}
