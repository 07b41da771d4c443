#!/usr/bin/env bash
# A throw-away PostgreSQL server for the results-store tests.
#
#   scripts/postgres-test.sh install      install Debian's postgresql when missing (needs root)
#   scripts/postgres-test.sh start DIR    create a cluster in DIR (an empty folder), start it on
#                                         127.0.0.1 and print its URL: postgres://biasjig@127.0.0.1:PORT/biasjig
#   scripts/postgres-test.sh stop DIR     stop it and remove DIR
#
# The server never runs as root: run as root, the script creates the system user `biasjigpg`
# and runs the cluster as that user; run as anyone else, it runs as that user. Local connections
# on 127.0.0.1 are trusted (a test cluster that listens nowhere else).
set -euo pipefail

PGUSER_OS=biasjigpg

bindir() {
    local d
    for d in $(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V -r); do
        if [[ -x "$d/initdb" && -x "$d/pg_ctl" ]]; then
            echo "$d"
            return 0
        fi
    done
    if command -v initdb >/dev/null && command -v pg_ctl >/dev/null; then
        dirname "$(command -v initdb)"
        return 0
    fi
    return 1
}

install() {
    if bindir >/dev/null; then
        return 0
    fi
    if [[ $(id -u) -ne 0 ]]; then
        echo "postgresql is not installed and this is not root: install Debian's postgresql package" >&2
        exit 1
    fi
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq
    apt-get install -y -qq postgresql >/dev/null
    # Debian starts a default cluster on install; the tests use their own.
    if command -v pg_lsclusters >/dev/null; then
        pg_lsclusters -h 2>/dev/null | while read -r ver name _; do
            pg_ctlcluster "$ver" "$name" stop 2>/dev/null || true
        done
    fi
    bindir >/dev/null
}

# Run a command as the cluster's owner.
as_owner() {
    if [[ $(id -u) -eq 0 ]]; then
        runuser -u "$PGUSER_OS" -- "$@"
    else
        "$@"
    fi
}

free_port() {
    local p
    for p in $(seq 54330 54430); do
        if ! (exec 3<>"/dev/tcp/127.0.0.1/$p") 2>/dev/null; then
            echo "$p"
            return 0
        fi
    done
    return 1
}

start() {
    local dir=$1 bin port
    bin=$(bindir) || { echo "postgresql not installed: run '$0 install' as root" >&2; exit 1; }
    mkdir -p "$dir"
    if [[ $(id -u) -eq 0 ]]; then
        id "$PGUSER_OS" >/dev/null 2>&1 || useradd --system --no-create-home --shell /usr/sbin/nologin "$PGUSER_OS"
        chown "$PGUSER_OS" "$dir"
        chmod 700 "$dir"
    fi
    port=$(free_port)
    as_owner "$bin/initdb" -D "$dir/data" -U biasjig --auth=trust -E UTF8 >"$dir/initdb.log" 2>&1 \
        || { cat "$dir/initdb.log" >&2; exit 1; }
    as_owner "$bin/pg_ctl" -D "$dir/data" -l "$dir/server.log" -w -t 60 \
        -o "-c listen_addresses=127.0.0.1 -p $port -k $dir -c max_connections=50" start >/dev/null \
        || { cat "$dir/server.log" >&2; exit 1; }
    as_owner "$bin/createdb" -h 127.0.0.1 -p "$port" -U biasjig biasjig
    echo "postgres://biasjig@127.0.0.1:$port/biasjig"
}

stop() {
    local dir=$1 bin
    bin=$(bindir) || exit 0
    if [[ -d "$dir/data" ]]; then
        as_owner "$bin/pg_ctl" -D "$dir/data" -m fast -w stop >/dev/null 2>&1 || true
    fi
    rm -rf "$dir"
}

case "${1:-}" in
    install) install ;;
    start) start "${2:?start DIR}" ;;
    stop) stop "${2:?stop DIR}" ;;
    *) echo "usage: $0 install | start DIR | stop DIR" >&2; exit 2 ;;
esac
