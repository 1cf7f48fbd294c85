#!/usr/bin/env bash
# The test command: every Rust test in the workspace (the C, C++ and Fortran examples are
# compiled and run against a real server by client/ffi/tests/languages.rs), then the
# cross-language checks in Python (a client generated from the proto alone, and the ratewell
# Python package), each in a throwaway virtual environment.
set -euo pipefail
cd "$(dirname "$0")/.."

# The language examples need C, C++ and Fortran compilers. On a fresh Debian machine the
# Fortran one is missing: install it from the system's packages when we can (root + apt-get).
missing=()
command -v cc >/dev/null || missing+=(gcc)
command -v c++ >/dev/null || missing+=(g++)
command -v gfortran >/dev/null || missing+=(gfortran)
if ((${#missing[@]})); then
    if [[ $(id -u) -eq 0 ]] && command -v apt-get >/dev/null; then
        echo "== installing ${missing[*]} from the system's packages =="
        apt-get install -y -qq "${missing[@]}" >/dev/null 2>&1 \
            || { apt-get update -qq >/dev/null && apt-get install -y -qq "${missing[@]}" >/dev/null; }
    else
        echo "scripts/test.sh: missing compilers: ${missing[*]} (install them, e.g. apt-get install ${missing[*]})" >&2
        exit 1
    fi
fi

cargo test --workspace --locked
./scripts/python-client-check.sh
./scripts/python-package-check.sh
# The deploy demo: concurrent jobs sharing one fetch through a table-file folder, jobs reading a
# table file with no server, a refused pin (small run; the debug binaries are already built).
RATEWELL_DEMO_JOBS=3 RATEWELL_DEMO_STEPS=400 RATEWELL_DEMO_SOLVE_EVERY=100 bash deploy-demo/run-demo.sh
