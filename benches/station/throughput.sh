#!/usr/bin/env bash
# Station throughput: `lc-host calibrate` of one simulated lot, database
# writes and image files included, on SQLite and (when a server is given)
# on PostgreSQL. Prints units per second of each run; docs/performance.md
# ("Station throughput") records a run. No figure is asserted anywhere.
#
#   bash benches/station/throughput.sh [UNITS] [RUNS]   (default 10 000, 3)
#
# LC_HOST_BIN=path measures that build instead of this tree's release
# build (to compare two builds side by side on the same rig log).
# LC_STATION_ONE_UNIT=0 skips the run with one unit per transaction (for
# interleaving short runs of two builds).
#
# Each run writes a fresh images folder under $TMPDIR/lc-station-bench-images
# and the benchmark deletes none of them: on ext4 without a journal, the
# kernel does not reuse an inode number freed in the last 60 s (360 s while
# its inode table block is not yet written back), and every new file's
# allocation steps past all of them (ext4's recently_deleted), so a run
# started within minutes of deleting the 10 000 files of an earlier run pays
# for that deletion (docs/performance.md, "Station throughput"). A station
# keeps its images folder; it does not delete tens of thousands of files
# minutes before each lot. `throughput.sh clean` deletes the folders (then
# wait 6 minutes before measuring again on such a file system); the space
# they take is printed at the end.
#
# Needs GNU time (/usr/bin/time, Debian package "time") and bc.
# PostgreSQL: set LC_TEST_POSTGRES_URL (as .ci/run exports it) to also
# measure against that server; each run uses a fresh database schema.
set -euo pipefail
cd "$(dirname "$0")/../.."
work=${TMPDIR:-/tmp}/lc-station-bench
images=$work-images
if [ "${1:-}" = clean ]; then
    rm -rf "$images"
    echo "removed $images; on ext4 without a journal, wait 6 minutes before measuring"
    exit 0
fi
units=${1:-10000}
runs=${2:-3}
rm -rf "$work"
mkdir -p "$work" "$images"
stamp=$(date +%s)
if [ -n "${LC_HOST_BIN:-}" ]; then
    bin=$LC_HOST_BIN
else
    cargo build --release -q -p lc-host
    bin=$PWD/target/release/lc-host
fi
plan=examples/data/demo-plan.toml

"$bin" simulate rig --lot BENCH --units "$units" --seed 11 -o "$work/rig.csv"
echo "rig log: $units units, $(($(wc -l < "$work/rig.csv") - 2)) rows, $(du -h "$work/rig.csv" | cut -f1)"
echo "cores: $(nproc); load before: $(cut -d' ' -f1-3 /proc/loadavg)"

# Wall time and the process's CPU time (user + system, all threads): on a
# machine shared with other work the wall time measures the share it got,
# the CPU time what the run cost.
one() { # label, db, extra args...
    local label=$1 db=$2; shift 2
    run_no=$((${run_no:-0} + 1))
    local img="$images/img-$stamp-$run_no"
    local code=0
    /usr/bin/time -f "%e %U %S" -o "$work/time.txt" \
        "$bin" calibrate "$work/rig.csv" --plan "$plan" --lot BENCH --db "$db" \
        --images "$img" "$@" > /dev/null 2> "$work/err.txt" || code=$?
    if [ "$code" -gt 1 ]; then
        echo "error: calibrate exited $code" >&2
        cat "$work/err.txt" >&2
        exit 1
    fi
    read -r wall user sys < <(tail -n 1 "$work/time.txt")
    printf '%-36s %7.2f s wall %8.0f units/s   cpu %6.2f s (%.3f ms a unit)   load %s\n' \
        "$label" "$wall" "$(echo "$units / $wall" | bc -l)" "$(echo "$user + $sys" | bc -l)" \
        "$(echo "1000 * ($user + $sys) / $units" | bc -l)" "$(cut -d' ' -f1 /proc/loadavg)"
}

for r in $(seq 1 "$runs"); do
    rm -f "$work"/units.db*
    one "sqlite, groups of 256 (run $r)" "$work/units.db"
done
if [ "${LC_STATION_ONE_UNIT:-1}" != 0 ]; then
    rm -f "$work"/units.db*
    one "sqlite, one unit per transaction" "$work/units.db" --group-units 1
fi

if [ -n "${LC_TEST_POSTGRES_URL:-}" ]; then
    for r in $(seq 1 "$runs"); do
        schema="lc_bench_$$_$r"
        url="$LC_TEST_POSTGRES_URL"
        case "$url" in *\?*) url="$url&options=-csearch_path%3D$schema" ;; *) url="$url?options=-csearch_path%3D$schema" ;; esac
        psql -q "$LC_TEST_POSTGRES_URL" -c "CREATE SCHEMA $schema" > /dev/null
        one "postgresql, groups of 256 (run $r)" "$url"
        psql -q "$LC_TEST_POSTGRES_URL" -c "SET client_min_messages = warning; DROP SCHEMA $schema CASCADE" > /dev/null
    done
else
    echo "postgresql: skipped (set LC_TEST_POSTGRES_URL)"
fi
echo "images folders kept: $(du -sh "$images" | cut -f1) in $images (bash $0 clean removes them)"
