#!/usr/bin/env bash
# The soak run (not CI): 1,000 concurrent clients, each on its own connection, against one
# release server for 60 s (after 30 s of warm-up lookups), after a 10 s floor of empty calls at
# the same concurrency. Prints a
# JSON report (p50/p99 of lookups beside the empty-call floor, server memory at the start and end)
# and fails on any error or on memory growth over 10%.
#   scripts/perf/soak.sh [CLIENTS] [SECONDS]
set -euo pipefail
cd "$(dirname "$0")/../.."
CLIENTS="${1:-1000}"
SECONDS_="${2:-60}"
# Each client holds a socket here and one in the server: raise the open-files limit to the
# hard limit for both processes.
ulimit -n "$(ulimit -Hn)"
cargo build --release --locked -p ratewell-service --bin ratewell-server -p ratewell-bench --bin ratewell-bench
echo "machine: $(nproc) cores, load average $(cut -d' ' -f1-3 /proc/loadavg)" >&2
target/release/ratewell-bench soak --server-bin target/release/ratewell-server \
  --clients "$CLIENTS" --seconds "$SECONDS_"
