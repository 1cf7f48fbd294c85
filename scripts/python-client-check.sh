#!/usr/bin/env bash
# Cross-language check: a Python client generated from proto/ratewell/v1/*.proto alone talks
# to the real server and must get bit-for-bit the answer the Rust client gets.
#
# Steps: a throwaway virtual environment (python3 -m venv in a mktemp folder) with grpcio,
# grpcio-tools, protobuf, grpcio-health-checking and grpcio-status from PyPI; Python stubs
# generated with grpc_tools.protoc; the server and the Rust side (tests/examples/lookup_json.rs)
# built with cargo; the server started on a free loopback port; a wait for health SERVING;
# the Rust answer saved as JSON; tests/python/check_client.py run against both. The server is
# stopped and the folder removed on exit. The last line is "N passed, N failed"; the exit
# status is non-zero on any failure.
set -euo pipefail
cd "$(dirname "$0")/.."

WORK="$(mktemp -d "${TMPDIR:-/tmp}/ratewell-python-check.XXXXXX")"
SERVER_PID=""

cleanup() {
    if [[ -n "$SERVER_PID" ]] && kill -0 "$SERVER_PID" 2>/dev/null; then
        kill -TERM "$SERVER_PID" 2>/dev/null || true
        wait "$SERVER_PID" 2>/dev/null || true
    fi
    rm -rf "$WORK"
}
trap cleanup EXIT

# A failure before the Python checks run counts as one failed check.
setup_failed() {
    echo "python-client-check: $1" >&2
    if [[ -f "$WORK/server.log" ]]; then
        echo "--- server log ---" >&2
        tail -n 40 "$WORK/server.log" >&2 || true
    fi
    echo "0 passed, 1 failed"
    exit 1
}

echo "== virtual environment in $WORK/venv =="
python3 -m venv "$WORK/venv" || setup_failed "python3 -m venv failed (is the venv module installed?)"
PY="$WORK/venv/bin/python"
"$PY" -m pip install --quiet --disable-pip-version-check --no-input \
    grpcio grpcio-tools protobuf grpcio-health-checking grpcio-status \
    || setup_failed "pip install from PyPI failed"

echo "== Python stubs from proto/ratewell/v1/*.proto =="
mkdir -p "$WORK/gen"
"$PY" -m grpc_tools.protoc -I proto --python_out="$WORK/gen" --grpc_python_out="$WORK/gen" \
    proto/ratewell/v1/*.proto || setup_failed "grpc_tools.protoc failed"

echo "== building the server and the Rust side =="
cargo build --quiet -p ratewell-service --bin ratewell-server || setup_failed "server build failed"
cargo build --quiet -p ratewell-e2e --example lookup_json || setup_failed "lookup_json build failed"
TARGET_DIR="$(cargo metadata --format-version 1 --no-deps \
    | "$PY" -c 'import json, sys; print(json.load(sys.stdin)["target_directory"])')" \
    || setup_failed "cargo metadata failed"
SERVER_BIN="$TARGET_DIR/debug/ratewell-server"
RUST_BIN="$TARGET_DIR/debug/examples/lookup_json"

# The server cannot print the port it was given for 127.0.0.1:0, so ask the OS for a free one.
PORT="$("$PY" -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1]); s.close()')"
ADDRESS="127.0.0.1:$PORT"

echo "== starting the server on $ADDRESS =="
"$SERVER_BIN" --listen "$ADDRESS" >"$WORK/server.log" 2>&1 &
SERVER_PID=$!
export PYTHONPATH="$WORK/gen"
"$PY" tests/python/check_client.py --address "$ADDRESS" --wait 60 \
    || setup_failed "the server did not become SERVING"
kill -0 "$SERVER_PID" 2>/dev/null || setup_failed "the server exited"

echo "== the Rust client's answer =="
"$RUST_BIN" "http://$ADDRESS" >"$WORK/rust.json" || setup_failed "lookup_json failed"

echo "== Python checks =="
status=0
"$PY" tests/python/check_client.py --address "$ADDRESS" --rust-json "$WORK/rust.json" || status=$?
exit "$status"
