#!/usr/bin/env bash
# Quick start, part 2: set up and run the whole test suite (unit, doc, end-to-end).
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/setup.sh
cargo test --release --all-targets
cargo test --release --doc
# Atomic outputs: SIGKILL part way through runs on a large generated raster.
bash tests/kill_test.sh
