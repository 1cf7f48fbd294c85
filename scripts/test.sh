#!/usr/bin/env bash
# The test command: every Rust test in the workspace, then the cross-language check (a Python
# client generated from the proto alone, in a throwaway virtual environment).
set -euo pipefail
cd "$(dirname "$0")/.."
cargo test --workspace --locked
./scripts/python-client-check.sh
