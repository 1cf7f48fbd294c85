#!/usr/bin/env python3
"""The numpy / scipy side of ratewell's side-by-side comparison (run by compare.sh).

Does what a user would do without ratewell, on exactly the data the Rust side used in the same
run (written by ratewell-bench and ratewell-bench-core into the work folder):

- evaluation: the fetched tables' knots turned into ln q_ul(log10 T) per table, then
  numpy.interp (linear in log-log space) + exp, and scipy CubicSpline + exp, for 2,000 tables at
  10,000 temperatures, all results kept (as ratewell keeps them); plus cost per value against
  batch size on one table;
- population solves: the same rate matrices, assembled into the same normalised statistical
  equilibrium systems for every (Te, ne) point and solved with numpy.linalg.solve on the stack.

Writes <work>/python.json. Times are the best of several runs, as on the Rust side.
"""
import argparse
import datetime
import json
import os
import platform
import time

import numpy as np
import scipy
from scipy.interpolate import CubicSpline


def best_of(reps, fn):
    best = float("inf")
    for _ in range(reps):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def load_f64(path):
    return np.fromfile(path, dtype="<f8")


def knots_for_interp(work):
    """The fetched tables' knots as ln q_ul against log10 T, per table (written by ratewell-bench)."""
    ev = os.path.join(work, "eval")
    with open(os.path.join(ev, "index.json")) as f:
        index = json.load(f)
    n_tab, n_knot = index["tables"], index["knots"]
    ln_ups = load_f64(os.path.join(ev, "ln_upsilon.f64")).reshape(n_tab, n_knot)
    g_upper = load_f64(os.path.join(ev, "g_upper.f64"))
    log10_knots = index["log10_t_min_k"] + index["log10_t_step"] * np.arange(n_knot)
    # ln q_ul at the knots: q_ul = C Upsilon / (g_u sqrt(T)) (Osterbrock & Ferland 2006, eq. 3.20).
    ln_q_knots = (
        ln_ups
        + np.log(index["rate_prefactor_cm3_s_k_half"] / g_upper)[:, None]
        - 0.5 * np.log(10.0) * log10_knots[None, :]
    )
    return index, log10_knots, ln_q_knots


def evaluation(work, reps):
    ev = os.path.join(work, "eval")
    index, log10_knots, ln_q_knots = knots_for_interp(work)
    n_tab, n_knot, n_t = index["tables"], index["knots"], index["temperatures"]
    temps = load_f64(os.path.join(ev, "temperatures_k.f64"))
    x = np.log10(temps)
    result = np.empty((n_tab, n_t))

    def run_interp():
        for i in range(n_tab):
            np.exp(np.interp(x, log10_knots, ln_q_knots[i]), out=result[i])

    interp_s = best_of(reps, run_interp)
    interp_result = result.copy()

    spline = CubicSpline(log10_knots, ln_q_knots, axis=1)

    def run_spline():
        # All tables at once (axis=1), in blocks of 100 tables to bound memory.
        for start in range(0, n_tab, 100):
            block = CubicSpline(log10_knots, ln_q_knots[start : start + 100], axis=1)
            np.exp(block(x), out=result[start : start + 100])

    spline_s = best_of(reps, run_spline)
    del spline

    # Agreement with ratewell's values (every 1000th value): different interpolants, so this
    # is the size of the linear-interpolation error, not a check of either.
    ours = load_f64(os.path.join(ev, "ratewell_sample.f64"))
    theirs = interp_result.reshape(-1)[::1000][: len(ours)]
    interp_vs_ours = float(np.max(np.abs(theirs / ours - 1.0)))
    theirs = result.reshape(-1)[::1000][: len(ours)]
    spline_vs_ours = float(np.max(np.abs(theirs / ours - 1.0)))

    curve = []
    table = ln_q_knots[0]
    one_spline = CubicSpline(log10_knots, table)
    for n in index["batch_sizes"]:
        xs = np.log10(10.0 ** (1.75 + 6.2 * (np.arange(n) + 0.5) / n))
        calls = max(1, min(20000, 2_000_000 // n))

        def run_interp_n():
            for _ in range(calls):
                np.exp(np.interp(xs, log10_knots, table))

        def run_spline_n():
            for _ in range(calls):
                np.exp(one_spline(xs))

        curve.append(
            {
                "batch": n,
                "interp_seconds_per_value": best_of(min(reps, 3), run_interp_n) / (calls * n),
                "cubic_spline_seconds_per_value": best_of(min(reps, 3), run_spline_n) / (calls * n),
            }
        )
    values = n_tab * n_t
    print(
        f"numpy.interp {interp_s / values * 1e9:.2f} ns/value, CubicSpline {spline_s / values * 1e9:.2f} ns/value "
        f"(max relative difference from ratewell: interp {interp_vs_ours:.1e}, spline {spline_vs_ours:.1e})"
    )
    return {
        "tables": n_tab,
        "knots": n_knot,
        "temperatures": n_t,
        "interp_seconds_per_value": interp_s / values,
        "cubic_spline_seconds_per_value": spline_s / values,
        "interp_max_relative_difference_from_ratewell": interp_vs_ours,
        "cubic_spline_max_relative_difference_from_ratewell": spline_vs_ours,
        "batch_curve": curve,
    }


def bindings(work, reps):
    """The same 1e6 values as the Rust library and the C ABI (written by ratewell-bench into
    <work>/bindings), through the ratewell Python package and through numpy.interp on the same
    tables, ONE thread on both sides (the package evaluates on the calling thread; numpy.interp
    is single-threaded). The package's values must equal the Rust library's bit for bit."""
    try:
        import ratewell
    except ImportError:
        return {"skipped": "the ratewell Python package is not installed in this environment"}
    folder = os.path.join(work, "bindings")
    with open(os.path.join(folder, "index.json")) as f:
        index = json.load(f)
    tables = ratewell.load_tables(os.path.join(folder, index["table_file"]))
    temps = load_f64(os.path.join(folder, "temperatures_k.f64"))
    transitions = [tuple(t) for t in index["transitions"]]
    rust = load_f64(os.path.join(folder, "rust_deexcitation.f64"))
    kept = {}

    def run_package():
        kept["d"] = tables.evaluate(temps, transitions=transitions, direction="deexcitation")[1]

    package_s = best_of(reps, run_package)
    identical = bool(np.array_equal(kept["d"].reshape(-1).view(np.uint64), rust.view(np.uint64)))

    # numpy.interp on the same tables: the first len(transitions) tables of the evaluation dump
    # are the same tables in the same order.
    _, log10_knots, ln_q_knots = knots_for_interp(work)
    ln_q_knots = ln_q_knots[: len(transitions)]
    x = np.log10(temps)
    result = np.empty((len(transitions), len(temps)))

    def run_interp():
        for i in range(len(transitions)):
            np.exp(np.interp(x, log10_knots, ln_q_knots[i]), out=result[i])

    interp_s = best_of(reps, run_interp)
    values = len(transitions) * len(temps)
    print(
        f"Python package {package_s / values * 1e9:.2f} ns/value (bit-identical to Rust: {identical}), "
        f"numpy.interp {interp_s / values * 1e9:.2f} ns/value, one thread, {values} values"
    )
    return {
        "threads": 1,
        "values": values,
        "package_seconds_per_value": package_s / values,
        "package_bit_identical_to_rust": identical,
        "interp_seconds_per_value": interp_s / values,
        "ratewell_version": getattr(ratewell, "__version__", None),
    }


def solves(work, core, reps):
    rows = []
    folder = core["solves"]["dir"]
    for row in core["solves"]["rows"]:
        n = row["levels"]
        temps = np.array(row["temperatures_k"])
        dens = np.array(row["densities_cm3"])
        a = load_f64(os.path.join(folder, row["a_file"])).reshape(n, n)
        q = load_f64(os.path.join(folder, row["q_file"])).reshape(len(temps), n, n)
        check = load_f64(os.path.join(folder, row["check_file"]))
        b = np.zeros(n)
        b[0] = 1.0
        idx = np.arange(n)
        out = []

        def run():
            out.clear()
            for t in range(len(temps)):
                # Rates j -> k for every density: R[p] = A + ne[p] q(T).
                r = a[None, :, :] + dens[:, None, None] * q[t][None, :, :]
                d = r.sum(axis=2)  # total depopulation of each level
                # Row j >= 1: level j's balance divided by D_j; row 0: sum of populations = 1.
                m = -np.transpose(r, (0, 2, 1)) / d[:, :, None]
                m[:, idx, idx] = 1.0
                m[:, 0, :] = 1.0
                x = np.linalg.solve(m, np.broadcast_to(b, (len(dens), n))[..., None])[..., 0]
                out.append(x)

        seconds = best_of(reps, run)
        points = len(temps) * len(dens)
        x = np.concatenate(out)
        x = x / x.sum(axis=1, keepdims=True)
        agreement = float(np.max(np.abs(x[:, n - 1] - check) / np.maximum(np.abs(check), 1e-300)))
        print(f"numpy stacked solve N={n}: {seconds / points * 1e6:.2f} us/point (top-level population vs ratewell: {agreement:.1e})")
        rows.append(
            {
                "levels": n,
                "points": points,
                "seconds_per_point": seconds / points,
                "top_level_relative_difference_from_ratewell": agreement,
            }
        )
    return rows


def blas_info():
    try:
        from threadpoolctl import threadpool_info

        return [{k: i.get(k) for k in ("internal_api", "num_threads", "architecture", "version")} for i in threadpool_info()]
    except ImportError:
        return "threadpoolctl not installed"


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--work", required=True)
    parser.add_argument("--quick", action="store_true")
    args = parser.parse_args()
    reps = 1 if args.quick else 5
    with open(os.path.join(args.work, "core.json")) as f:
        core = json.load(f)
    report = {
        "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "versions": {"python": platform.python_version(), "numpy": np.__version__, "scipy": scipy.__version__},
        "blas": blas_info(),
        "evaluation": evaluation(args.work, reps),
        "bindings": bindings(args.work, max(reps, 5) if not args.quick else 2),
        "solves": solves(args.work, core, 1 if args.quick else 3),
    }
    path = os.path.join(args.work, "python.json")
    with open(path, "w") as f:
        json.dump(report, f, indent=2)
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
