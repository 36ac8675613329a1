#!/usr/bin/env bash
# The project's whole test suite: formatting, lints, docs, tests (host,
# property, published checks, emulator), cross builds for Cortex-M0 and
# Cortex-M4F with and without defmt, the panic-freedom proof, the C API
# (static libraries, proof, current header, sanitizers), and that the
# measured figures of docs/performance.md are current.
#
#   bash scripts/check.sh
#
# Needs: the Rust toolchain with rustfmt and clippy; for the cross builds the
# targets thumbv6m-none-eabi and thumbv7em-none-eabihf; for the emulator
# tests Debian's qemu-system-arm; for the report's browser test Debian's
# chromium. Missing pieces are reported and skipped on
# a developer machine; with CI=true they are failures.
set -euo pipefail
cd "$(dirname "$0")/.."

ci=${CI:-}
skipped=()
step() { printf '\n==> %s\n' "$*"; }
missing() {
    # $1 what, $2 how to install
    if [ -n "$ci" ]; then
        echo "error: $1 is missing (CI=true): $2" >&2
        exit 1
    fi
    echo "skipped: $1 is missing; install with: $2" >&2
    skipped+=("$1 ($2)")
}

targets=(thumbv6m-none-eabi thumbv7em-none-eabihf)
have_targets=yes
installed=$(rustup target list --installed 2>/dev/null || true)
for t in "${targets[@]}"; do
    grep -qx "$t" <<<"$installed" || have_targets=no
done

step "format"
cargo fmt --all -- --check

step "clippy (host, all targets)"
cargo clippy --workspace --all-targets -- -D warnings

step "rustdoc"
RUSTDOCFLAGS="-D warnings" cargo doc --workspace --no-deps --quiet
# lc-core on its own, with its default features (no `design`), as a
# firmware developer or a documentation host builds it: no links into
# host-only items.
RUSTDOCFLAGS="-D warnings" cargo doc -p lc-core --no-deps --quiet

if [ "$have_targets" = yes ]; then
    for t in "${targets[@]}"; do
        for f in "" "--features defmt"; do
            step "lc-core for $t ${f:-(no features)}"
            # shellcheck disable=SC2086
            cargo clippy -p lc-core --lib --target "$t" $f -- -D warnings
            # shellcheck disable=SC2086
            cargo build -p lc-core --release --target "$t" $f --quiet
        done
    done
    # Each reader alone, none at all, and the small CRC table: what a
    # firmware that names only its reader builds (lib.rs, "Cargo features").
    for f in proximity level metal "" "proximity,crc-nibble" "scanner,ntc" "link" "proximity,link"; do
        step "lc-core for thumbv6m-none-eabi, --no-default-features --features '$f'"
        cargo clippy -p lc-core --lib --target thumbv6m-none-eabi --no-default-features \
            --features "$f" -- -D warnings
    done
    step "firmware example lints"
    for t in "${targets[@]}"; do
        cargo clippy --manifest-path examples/firmware/Cargo.toml --target "$t" --quiet -- -D warnings
    done
    cargo clippy --manifest-path examples/unit-firmware/Cargo.toml --target thumbv6m-none-eabi --quiet -- -D warnings
    cargo clippy --manifest-path examples/link-firmware/Cargo.toml --target thumbv6m-none-eabi --quiet -- -D warnings
    # The C API (lc-core/capi, docs/c-api.md): its static library for both
    # cores and the host, and the panic-never proof of its entry points
    # (a link fails if a panic path is reachable), without and with
    # overflow checks.
    for t in "${targets[@]}"; do
        step "C API static library and panic-never proof for $t"
        cargo clippy -p lc-core-capi --lib --target "$t" -- -D warnings
        cargo build -p lc-core-capi --release --target "$t" --quiet
        for p in release release-checked; do
            (cd lc-core/capi/proof && env -u RUSTFLAGS CARGO_TARGET_DIR="$PWD/../../../target/capi-proof" \
                cargo build --quiet --profile "$p" --target "$t")
        done
    done
    cargo build -p lc-core-capi --release --quiet
else
    missing "Cortex-M rust targets" "rustup target add ${targets[*]}"
fi
step "lc-core defmt feature on the host (lints; unit tests still link)"
cargo clippy -p lc-core --lib --features defmt -- -D warnings
cargo test -p lc-core --lib --features defmt --quiet
step "lc-core with the nibble CRC table (image and CRC tests)"
cargo test -p lc-core --lib --features crc-nibble --quiet image::

if ! command -v qemu-system-arm >/dev/null 2>&1; then
    missing "qemu-system-arm (emulator tests)" "apt-get install qemu-system-arm"
fi
# The unit-record store's tests run on SQLite and on PostgreSQL; the
# PostgreSQL half needs a server (the tests themselves fail under CI=true
# without one, and skip on a developer machine).
if [ -z "${LC_TEST_POSTGRES_URL:-}" ]; then
    missing "PostgreSQL test server (store tests on PostgreSQL)" \
        "apt-get install postgresql; eval \"\$(bash scripts/pg-test-server.sh start)\""
fi
if ! command -v chromium >/dev/null 2>&1; then
    missing "chromium (the lot report in a browser)" "apt-get install chromium"
fi

step "tests (unit, property, published checks, integration, emulator, doc)"
log=$(mktemp)
trap 'rm -f "$log"' EXIT
# The C API's own tests run on their own (below): in a workspace run,
# lc-host's lc-core features (the companion coil among them) would be
# unified into the C API's build and change the storage sizes its header
# states.
cargo test --workspace --exclude lc-core-capi 2>&1 | tee "$log"
if [ "$have_targets" = yes ] && command -v qemu-system-arm >/dev/null 2>&1; then
    step "example firmwares against their budgets (flash, static RAM, peak stack)"
    # Already checked by the test suite; this prints the figures. The
    # budget assertion itself is tests/firmware_budget.rs::within_budget.
    cargo test --quiet --test firmware_budget footprint -- --nocapture
fi
step "C API: header is current (lc-core/capi/include/lc_core.h), host C test under the sanitizers"
# On the C API's own feature set, as the static libraries are built. A
# stale header fails here by name.
cargo test -p lc-core-capi 2>&1 | tee -a "$log"
step "fault campaign: 10^6 rows, 8 channels, confusion matrix (docs/faults.md)"
cargo test -p lc-host --test fault_campaign -- --ignored --nocapture 2>&1 | tee -a "$log"
totals=$(awk '/^test result:/ { for (i = 1; i <= NF; i++) { if ($(i+1) ~ /^passed/) p += $i; if ($(i+1) ~ /^failed/) f += $i } } END { printf "%d passed, %d failed", p, f }' "$log")

if [ "$have_targets" = yes ] && command -v qemu-system-arm >/dev/null 2>&1; then
    step "docs/performance.md is current (scripts/perf-figures.sh --check)"
    bash scripts/perf-figures.sh --check
else
    missing "measured figures check (targets and qemu-system-arm)" "rustup target add ${targets[*]}; apt-get install qemu-system-arm"
fi

if [ ${#skipped[@]} -gt 0 ]; then
    printf '\nSKIPPED (not a failure on a developer machine):\n'
    printf '  - %s\n' "${skipped[@]}"
fi
echo
echo "check.sh: all steps passed"
echo "tests: $totals"
