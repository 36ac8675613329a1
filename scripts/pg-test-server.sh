#!/usr/bin/env bash
# Starts a throwaway PostgreSQL cluster for the store's tests and the
# station benchmark, and prints the export line of its URL:
#
#   eval "$(bash scripts/pg-test-server.sh start)"   # sets LC_TEST_POSTGRES_URL
#   bash scripts/pg-test-server.sh stop
#
# The cluster lives in a temporary folder (LC_PG_DIR, default
# ${TMPDIR:-/tmp}/lc-pg-test), listens on 127.0.0.1 only (port LC_PG_PORT,
# default 54329) with trust authentication, and runs as the `postgres` user
# when started by root (PostgreSQL refuses to run as root). Needs Debian's
# `postgresql` package (initdb and pg_ctl under /usr/lib/postgresql/N/bin).
set -euo pipefail
dir=${LC_PG_DIR:-${TMPDIR:-/tmp}/lc-pg-test}
port=${LC_PG_PORT:-54329}

bindir=""
if command -v pg_config > /dev/null 2>&1 && [ -x "$(pg_config --bindir)/initdb" ]; then
    bindir=$(pg_config --bindir)
fi
if [ -z "$bindir" ]; then
    bindir=$(ls -d /usr/lib/postgresql/*/bin 2> /dev/null | sort -V | tail -n 1 || true)
fi
if [ -z "$bindir" ] || [ ! -x "$bindir/initdb" ]; then
    echo "pg-test-server: no PostgreSQL server binaries (initdb); install Debian's postgresql package" >&2
    exit 1
fi

as_owner() {
    if [ "$(id -u)" = 0 ]; then
        runuser -u postgres -- "$@"
    else
        "$@"
    fi
}

case "${1:-start}" in
start)
    if [ -f "$dir/data/postmaster.pid" ] && as_owner "$bindir/pg_ctl" -D "$dir/data" status > /dev/null 2>&1; then
        :
    else
        rm -rf "$dir"
        mkdir -p "$dir"
        [ "$(id -u)" = 0 ] && chown postgres: "$dir"
        as_owner "$bindir/initdb" -D "$dir/data" -A trust -U postgres -E UTF8 --locale=C.UTF-8 > "$dir/initdb.log" 2>&1 \
            || { cat "$dir/initdb.log" >&2; exit 1; }
        as_owner "$bindir/pg_ctl" -D "$dir/data" -l "$dir/server.log" -w -t 60 \
            -o "-c listen_addresses=127.0.0.1 -p $port -k $dir -c max_connections=200" start > /dev/null \
            || { cat "$dir/server.log" >&2; exit 1; }
    fi
    echo "export LC_TEST_POSTGRES_URL=postgresql://postgres@127.0.0.1:$port/postgres"
    ;;
stop)
    as_owner "$bindir/pg_ctl" -D "$dir/data" -m fast -w stop > /dev/null 2>&1 || true
    rm -rf "$dir"
    ;;
*)
    echo "usage: $0 start|stop" >&2
    exit 2
    ;;
esac
