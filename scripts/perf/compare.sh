#!/usr/bin/env bash
# ratewell's side-by-side performance comparison, in one command:
#
#     scripts/perf/compare.sh [--quick] [--out DIR]
#
# 1. makes a throwaway Python virtual environment with numpy and scipy (deleted afterwards);
# 2. builds the release binaries: ratewell-server, ratewell-bench-core (service side) and
#    ratewell-bench (client side, crate client/bench);
# 3. ratewell-bench-core writes the INVENTED benchmark datasets, times table precompute for
#    300 levels / 44,850 transitions and population solves for N = 5, 20, 50, 200;
# 4. ratewell-bench starts the server as a child process on a loopback port with the
#    benchmark-only Transport service and times start-up, memory, local evaluation through the
#    client library, batched lookups vs an echo RPC of the same size, small-call latency vs the
#    empty RPC with 1 and 64 calls in flight;
# 5. baselines.py does the same work with numpy.interp, scipy CubicSpline and
#    numpy.linalg.solve on the same data;
# 6. ratewell-bench report prints every ratio with its target and PASS or FALL SHORT and writes
#    results.md, results.json and performance.svg into the output folder.
#
# Timings mean something only on a quiet machine: the script warns when the load average is
# above 0.5. Nothing here runs in `cargo test`.
set -euo pipefail
cd "$(dirname "$0")/../.."

quick=""
out="target/perf/$(date -u +%Y%m%d-%H%M%S)"
while [ $# -gt 0 ]; do
    case "$1" in
        --quick) quick="--quick" ;;
        --out) out="$2"; shift ;;
        *) echo "usage: $0 [--quick] [--out DIR]" >&2; exit 2 ;;
    esac
    shift
done
mkdir -p "$out"
out="$(cd "$out" && pwd)"

venv="$(mktemp -d -t ratewell-perf-venv.XXXXXX)"
trap 'rm -rf "$venv"' EXIT
echo "== Python baselines: numpy + scipy in a throwaway environment ($venv) =="
python3 -m venv "$venv"
"$venv/bin/pip" install --quiet --disable-pip-version-check numpy scipy threadpoolctl
echo "== the ratewell Python package (release build) into the same environment =="
"$venv/bin/pip" install --quiet --disable-pip-version-check ./client/python

echo "== release build =="
cargo build --release --locked -p ratewell-service --bin ratewell-server --bin ratewell-bench-core
cargo build --release --locked -p ratewell-bench --bin ratewell-bench
bin="$(cargo metadata --format-version 1 --no-deps | "$venv/bin/python" -c 'import json,sys; print(json.load(sys.stdin)["target_directory"])')/release"

load="$(cut -d' ' -f1 /proc/loadavg)"
echo "== measuring (load average $load, $(nproc) cores) =="
if "$venv/bin/python" -c "import sys; sys.exit(0 if float('$load') <= 0.5 else 1)"; then :; else
    echo "warning: load average $load > 0.5: other work is running, timings will be noisy" >&2
fi

"$bin/ratewell-bench-core" --out "$out" $quick
"$bin/ratewell-bench" measure --server-bin "$bin/ratewell-server" --data-dir "$out/data" --work "$out" $quick
# OpenBLAS tuning variables set for old builds slow a current numpy down; unset for this run only.
env -u OPENBLAS_CORETYPE -u OPENBLAS_L2_SIZE "$venv/bin/python" scripts/perf/baselines.py --work "$out" $quick

echo "== results =="
"$bin/ratewell-bench" report --work "$out" --command-line "scripts/perf/compare.sh $quick"
