#!/usr/bin/env bash
# The full kill test of the end-of-line station: 100 random SIGKILLs during
# a 2 000-unit lot on SQLite (and 20 on PostgreSQL when LC_TEST_POSTGRES_URL
# is set), each followed by a re-run; the final database and images folder
# must equal a clean run's, with no temporary file left. The test suite runs
# fewer kills on a smaller lot; this is the run docs/performance.md reports.
#
#   bash scripts/kill-test.sh [SQLITE_KILLS] [POSTGRES_KILLS] [UNITS]
set -euo pipefail
cd "$(dirname "$0")/.."
export LC_KILLS=${1:-100} LC_PG_KILLS=${2:-20} LC_KILL_UNITS=${3:-2000}
cargo test --release -p lc-host --test calibrate -- --nocapture killed 2>&1 | grep -E "kill test|test result|panicked|FAILED"
