#!/usr/bin/env bash
# ratewell deploy demo: one server on the embedded demo dataset, several concurrent example jobs,
# then a check that every job used the same dataset content hash and computed identical numbers.
#
# The demo dataset (species "Mk II" and "Mk III" of the fictional element Mockium) and the jobs'
# cooling track are INVENTED: the numbers show that jobs agree, not anything about nature.
#
# Usage: bash deploy-demo/run-demo.sh
# Settings (environment):
#   RATEWELL_DEMO_JOBS=6           concurrent jobs
#   RATEWELL_DEMO_STEPS=2000       steps per job (each evaluates every rate table locally)
#   RATEWELL_DEMO_SOLVE_EVERY=200  steps between population solves on the server
#   RATEWELL_DEMO_SPECIES="Mk II"  species the jobs use
#   RATEWELL_DEMO_PROFILE=debug    cargo profile: debug (quick to build) or release
#   RATEWELL_DEMO_KEEP=1           keep the work folder (summaries, logs) after a PASS
# Exit status 0 on PASS, 1 on FAIL.
set -euo pipefail

JOBS="${RATEWELL_DEMO_JOBS:-6}"
STEPS="${RATEWELL_DEMO_STEPS:-2000}"
SOLVE_EVERY="${RATEWELL_DEMO_SOLVE_EVERY:-200}"
SPECIES="${RATEWELL_DEMO_SPECIES:-Mk II}"
PROFILE="${RATEWELL_DEMO_PROFILE:-debug}"
KEEP="${RATEWELL_DEMO_KEEP:-}"

HERE="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
ROOT="$(cd "$HERE/.." && pwd)"
WORK="$(mktemp -d "${TMPDIR:-/tmp}/ratewell-demo.XXXXXX")"
SERVER_PID=""
JOB_PIDS=()
VERDICT="FAIL"

say() { printf '\n== %s\n' "$*"; }
fail() {
  printf '\nFAIL: %s\n' "$*" >&2
  exit 1
}

cleanup() {
  local pid
  for pid in "${JOB_PIDS[@]}"; do
    kill -TERM "$pid" 2>/dev/null || true
  done
  if [[ -n "$SERVER_PID" ]] && kill -0 "$SERVER_PID" 2>/dev/null; then
    # SIGTERM: the server reports NOT_SERVING, drains in-flight calls, then stops.
    kill -TERM "$SERVER_PID" 2>/dev/null || true
    for _ in $(seq 1 150); do
      kill -0 "$SERVER_PID" 2>/dev/null || break
      sleep 0.1
    done
    if kill -0 "$SERVER_PID" 2>/dev/null; then
      echo "server $SERVER_PID did not stop within 15 s; killing it" >&2
      kill -KILL "$SERVER_PID" 2>/dev/null || true
    fi
    wait "$SERVER_PID" 2>/dev/null || true
    echo "server stopped"
  fi
  if [[ "$VERDICT" == "PASS" && -z "$KEEP" ]]; then
    rm -rf "$WORK"
  else
    echo "summaries and logs kept in $WORK"
  fi
}
trap cleanup EXIT
trap 'exit 130' INT TERM

[[ "$JOBS" =~ ^[0-9]+$ && "$JOBS" -ge 2 ]] || fail "RATEWELL_DEMO_JOBS = '$JOBS': must be a whole number >= 2"
case "$PROFILE" in
  debug) PROFILE_FLAG=() ;;
  release) PROFILE_FLAG=(--release) ;;
  *) fail "RATEWELL_DEMO_PROFILE = '$PROFILE': must be debug or release" ;;
esac

say "building ratewell-server, the ratewell CLI and ratewell-demo-job ($PROFILE)"
cd "$ROOT"
cargo build "${PROFILE_FLAG[@]}" \
  -p ratewell-service --bin ratewell-server \
  -p ratewell-cli --bin ratewell \
  -p ratewell-demo-job --bin ratewell-demo-job
TARGET_DIR="$(cargo metadata --format-version 1 --no-deps | sed -n 's/.*"target_directory":"\([^"]*\)".*/\1/p')"
BIN="${TARGET_DIR:-$ROOT/target}/$PROFILE"
for b in ratewell-server ratewell ratewell-demo-job; do
  [[ -x "$BIN/$b" ]] || fail "$BIN/$b was not built"
done
STARTED=$SECONDS

say "starting ratewell-server on the embedded demo dataset (INVENTED data), on a free loopback port"
# Port 0: the system picks a free port, and the server's 'serving' log line names it. Settings
# from the caller's environment are cleared so the server holds only the demo dataset.
env -u RATEWELL_CONFIG -u RATEWELL_DATA_DIR -u RATEWELL_DEMO -u RATEWELL_LISTEN \
  "$BIN/ratewell-server" --listen 127.0.0.1:0 --json-logs >"$WORK/server.log" 2>&1 &
SERVER_PID=$!
ADDRESS=""
for _ in $(seq 1 300); do
  kill -0 "$SERVER_PID" 2>/dev/null || { cat "$WORK/server.log" >&2; fail "the server exited at start-up"; }
  ADDRESS="$(grep -m1 '"message":"serving"' "$WORK/server.log" | grep -oE '127\.0\.0\.1:[0-9]+' || true)"
  [[ -n "$ADDRESS" ]] && break
  sleep 0.1
done
[[ -n "$ADDRESS" ]] || { cat "$WORK/server.log" >&2; fail "the server did not report its address within 30 s"; }
export RATEWELL_SERVER="http://$ADDRESS"
echo "server pid $SERVER_PID listening on $RATEWELL_SERVER"

say "waiting for gRPC health SERVING"
HEALTHY=""
for _ in $(seq 1 100); do
  if "$BIN/ratewell" health >"$WORK/health.txt" 2>&1; then
    HEALTHY=1
    break
  fi
  sleep 0.1
done
cat "$WORK/health.txt"
[[ -n "$HEALTHY" ]] || fail "the server did not report SERVING within 10 s"

say "datasets on the server"
"$BIN/ratewell" datasets
HASH="$("$BIN/ratewell" --json datasets | grep -oE '"content_hash": *"[0-9a-f]{64}"' | grep -oE '[0-9a-f]{64}' | head -n1)"
[[ -n "$HASH" ]] || fail "could not read the demo dataset's content hash"
echo "jobs will pin content hash $HASH"

say "running $JOBS concurrent jobs ($SPECIES, $STEPS steps, populations every $SOLVE_EVERY steps)"
for i in $(seq 1 "$JOBS"); do
  RATEWELL_PIN_HASH="$HASH" "$BIN/ratewell-demo-job" run \
    --job-id "job-$i" --species "$SPECIES" --steps "$STEPS" --solve-every "$SOLVE_EVERY" \
    --cache-dir "$WORK/table-cache" \
    >"$WORK/job-$i.json" 2>"$WORK/job-$i.log" &
  JOB_PIDS+=("$!")
done
JOB_FAILURES=0
for i in $(seq 1 "$JOBS"); do
  rc=0
  wait "${JOB_PIDS[$((i - 1))]}" || rc=$?
  sed 's/^/  /' "$WORK/job-$i.log"
  if [[ $rc -ne 0 ]]; then
    echo "  job-$i exited with status $rc" >&2
    JOB_FAILURES=$((JOB_FAILURES + 1))
  fi
done
JOB_PIDS=()

CACHED=$(find "$WORK/table-cache" -name '*.rwtables' | wc -l)
echo "  the $JOBS jobs shared one folder: $CACHED table file(s) in it (one fetch, the others read it)"

say "nodes with no route to the service: one table file, written where the service is reachable"
"$BIN/ratewell" --dataset demo save-tables "$SPECIES" --output-dir "$WORK/tables"
TABLE_FILE="$(find "$WORK/tables" -name '*.rwtables' | head -n1)"
[[ -n "$TABLE_FILE" ]] || fail "ratewell save-tables wrote no table file"
OFFLINE_FAILURES=0
for i in 1 2; do
  # An address where nothing listens: these jobs must not need the server at all.
  "$BIN/ratewell-demo-job" run --server http://127.0.0.1:1 --pin-hash "$HASH" \
    --job-id "offline-$i" --species "$SPECIES" --steps "$STEPS" --solve-every "$SOLVE_EVERY" \
    --table-file "$TABLE_FILE" >"$WORK/offline-$i.json" 2>"$WORK/offline-$i.log" \
    || OFFLINE_FAILURES=$((OFFLINE_FAILURES + 1))
  sed 's/^/  /' "$WORK/offline-$i.log"
done
JOB_FAILURES=$((JOB_FAILURES + OFFLINE_FAILURES))

say "one job's results (job-1; INVENTED data)"
if command -v jq >/dev/null 2>&1; then
  jq '{job_id, dataset, checksum: .checksum.all, server_check, local, last_solve: .solves[-1]}' "$WORK/job-1.json"
else
  head -n 40 "$WORK/job-1.json"
fi

say "a job pinned to another content hash must be refused (exit status 3)"
WRONG_HASH="$( [[ "${HASH:0:1}" == "0" ]] && echo 1 || echo 0 )${HASH:1}"
rc=0
RATEWELL_PIN_HASH="$WRONG_HASH" "$BIN/ratewell-demo-job" run --job-id pin-check --steps 2 \
  >/dev/null 2>"$WORK/pin-check.log" || rc=$?
sed 's/^/  /' "$WORK/pin-check.log"
PIN_OK=""
if [[ $rc -eq 3 ]]; then
  PIN_OK=1
  echo "  refused as it should be (exit status 3)"
else
  echo "  expected exit status 3, got $rc" >&2
fi

say "comparing the $JOBS job summaries"
VERIFY_RC=0
"$BIN/ratewell-demo-job" verify $(for i in $(seq 1 "$JOBS"); do echo "$WORK/job-$i.json"; done) || VERIFY_RC=$?
say "comparing the jobs that read the table file with the others (local rates and table-set digest)"
"$BIN/ratewell-demo-job" verify "$WORK"/job-*.json "$WORK"/offline-*.json || VERIFY_RC=$?
[[ "$CACHED" -eq 1 ]] || { echo "expected 1 table file in the shared folder, found $CACHED" >&2; VERIFY_RC=1; }

ELAPSED=$((SECONDS - STARTED))
echo
if [[ $JOB_FAILURES -eq 0 && $VERIFY_RC -eq 0 && -n "$PIN_OK" ]]; then
  VERDICT="PASS"
  echo "DEMO PASS: $JOBS concurrent jobs (one fetch through a shared folder) and 2 jobs reading a table file with no server used one dataset content hash and computed identical numbers; a wrong pin was refused (${ELAPSED} s after the build)"
else
  echo "DEMO FAIL: $JOB_FAILURES job(s) failed, verify exit status $VERIFY_RC, pin refusal $([[ -n "$PIN_OK" ]] && echo ok || echo 'NOT seen') (${ELAPSED} s after the build)" >&2
  exit 1
fi
