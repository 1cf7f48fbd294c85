#!/usr/bin/env bash
# The ratewell Python package (client/python: PyO3 + maturin) installed with one pip command
# into a throwaway virtual environment, then its tests (pytest) and its example against a real
# server, with the Rust client's own evaluation as the reference. The last line is pytest's
# summary; the exit status is non-zero on any failure.
set -euo pipefail
cd "$(dirname "$0")/.."

WORK="$(mktemp -d "${TMPDIR:-/tmp}/ratewell-python-package.XXXXXX")"
SERVER_PID=""
cleanup() {
    if [[ -n "$SERVER_PID" ]] && kill -0 "$SERVER_PID" 2>/dev/null; then
        kill -TERM "$SERVER_PID" 2>/dev/null || true
        wait "$SERVER_PID" 2>/dev/null || true
    fi
    rm -rf "$WORK"
}
trap cleanup EXIT
setup_failed() {
    echo "python-package-check: $1" >&2
    [[ -f "$WORK/server.log" ]] && tail -n 40 "$WORK/server.log" >&2
    echo "0 passed, 1 failed"
    exit 1
}

echo "== virtual environment and the package (pip install ./client/python) =="
python3 -m venv "$WORK/venv" || setup_failed "python3 -m venv failed"
PY="$WORK/venv/bin/python"
"$PY" -m pip install --quiet --disable-pip-version-check --no-input pytest numpy \
    || setup_failed "pip install pytest numpy failed"
# The package's wheel is built by maturin through pip; the dev profile keeps CI quick (the
# bits do not depend on the profile: the rule is plain IEEE arithmetic in a fixed order).
"$PY" -m pip install --quiet --disable-pip-version-check --no-input \
    --config-settings=build-args="--profile dev" ./client/python \
    || setup_failed "pip install ./client/python failed"

echo "== the server and the Rust reference =="
cargo build --quiet -p ratewell-service --bin ratewell-server || setup_failed "server build failed"
cargo build --quiet -p ratewell-e2e --example reference_bits || setup_failed "reference_bits build failed"
TARGET_DIR="$(cargo metadata --format-version 1 --no-deps \
    | "$PY" -c 'import json, sys; print(json.load(sys.stdin)["target_directory"])')"
PORT="$("$PY" -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1]); s.close()')"
"$TARGET_DIR/debug/ratewell-server" --listen "127.0.0.1:$PORT" >"$WORK/server.log" 2>&1 &
SERVER_PID=$!
export RATEWELL_SERVER="http://127.0.0.1:$PORT"
export REFERENCE_BITS="$TARGET_DIR/debug/examples/reference_bits"
for _ in $(seq 1 300); do
    if "$PY" -c "import socket,sys; s=socket.socket(); sys.exit(s.connect_ex(('127.0.0.1', $PORT)))" 2>/dev/null; then
        break
    fi
    kill -0 "$SERVER_PID" 2>/dev/null || setup_failed "the server stopped before serving"
    sleep 0.1
done

echo "== example (client/python/examples/rates.py) =="
"$PY" client/python/examples/rates.py "$RATEWELL_SERVER" | tee "$WORK/example.out"
grep -q "^stamp content_hash [0-9a-f]\{64\}$" "$WORK/example.out" || setup_failed "the example printed no stamp"

echo "== tests (client/python/tests) =="
cd "$WORK"   # import the installed package, not the source folder
"$PY" -m pytest -q -p no:cacheprovider "$OLDPWD/client/python/tests"
