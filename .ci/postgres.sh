#!/usr/bin/env bash
# A throwaway PostgreSQL server on loopback for freezeout's storage tests.
#
# Source it and call the functions (safe to source: it sets no shell options):
#     source .ci/postgres.sh
#     start_test_postgres        # exports FREEZEOUT_TEST_POSTGRES_URL (and _DIR)
#     python -m pytest tests/test_storage.py
#     stop_test_postgres
# or run it:
#     eval "$(.ci/postgres.sh start)"   # prints export lines
#     eval "$(.ci/postgres.sh stop)"    # uses FREEZEOUT_TEST_POSTGRES_DIR, prints unset lines
#
# PostgreSQL comes from Debian's packages (apt-get install postgresql) when no
# /usr/lib/postgresql/*/bin/initdb exists. The cluster lives in a fresh temporary
# directory, owned by a non-root user (initdb refuses root: as root the Debian "postgres"
# user runs it), listens on 127.0.0.1 only at the first free port from 54329 (or
# $FREEZEOUT_TEST_POSTGRES_PORT) with its unix socket inside that directory, trusts local
# connections, and has a database "freezeout_test".

_fzpg_bindir() {
    local d
    d="$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1)"
    if [ -n "$d" ] && [ -x "$d/initdb" ]; then
        printf '%s\n' "$d"
    fi
}

_fzpg_port_busy() {
    # true when something accepts connections on 127.0.0.1:$1
    (exec 3<>"/dev/tcp/127.0.0.1/$1") 2>/dev/null
}

_fzpg_as() {
    # run a command as the cluster owner
    local user="$1"
    shift
    if [ "$(id -un)" = "$user" ]; then
        "$@"
    elif command -v runuser >/dev/null 2>&1; then
        runuser -u "$user" -- "$@"
    else
        su -s /bin/sh "$user" -c "$(printf '%q ' "$@")"
    fi
}

start_test_postgres() {
    local bindir dir user port tries
    bindir="$(_fzpg_bindir)"
    if [ -z "$bindir" ]; then
        if [ "$(id -u)" -ne 0 ]; then
            echo "postgres.sh: PostgreSQL is not installed and installing needs root" >&2
            return 1
        fi
        echo "postgres.sh: installing PostgreSQL from the Debian packages" >&2
        DEBIAN_FRONTEND=noninteractive apt-get update -q >&2 || return 1
        DEBIAN_FRONTEND=noninteractive apt-get install -y -q postgresql >&2 || return 1
        bindir="$(_fzpg_bindir)"
        if [ -z "$bindir" ]; then
            echo "postgres.sh: no initdb after installing postgresql" >&2
            return 1
        fi
    fi

    if [ "$(id -u)" -eq 0 ]; then
        user=postgres
        if ! id -u "$user" >/dev/null 2>&1; then
            useradd --system --home-dir /nonexistent --shell /usr/sbin/nologin "$user" \
                || return 1
        fi
    else
        user="$(id -un)"
    fi

    dir="$(mktemp -d "${TMPDIR:-/tmp}/freezeout-pg.XXXXXX")" || return 1
    chmod 700 "$dir"
    if [ "$(id -u)" -eq 0 ]; then
        chown "$user" "$dir" || return 1
    fi

    port="${FREEZEOUT_TEST_POSTGRES_PORT:-54329}"
    tries=0
    while _fzpg_port_busy "$port"; do
        port=$((port + 1))
        tries=$((tries + 1))
        if [ "$tries" -ge 100 ]; then
            echo "postgres.sh: no free port found" >&2
            rm -rf "$dir"
            return 1
        fi
    done

    if ! _fzpg_as "$user" "$bindir/initdb" -D "$dir/data" -U "$user" --auth=trust \
            -E UTF8 --locale=C --no-sync >"$dir/initdb.log" 2>&1; then
        cat "$dir/initdb.log" >&2
        rm -rf "$dir"
        return 1
    fi
    if ! _fzpg_as "$user" "$bindir/pg_ctl" -D "$dir/data" -l "$dir/server.log" -w -t 60 \
            -o "-c listen_addresses=127.0.0.1 -c port=$port -c unix_socket_directories=$dir -c fsync=off -c max_connections=60" \
            start >/dev/null; then
        cat "$dir/server.log" >&2
        rm -rf "$dir"
        return 1
    fi
    if ! _fzpg_as "$user" "$bindir/createdb" -h 127.0.0.1 -p "$port" -U "$user" \
            freezeout_test; then
        _fzpg_as "$user" "$bindir/pg_ctl" -D "$dir/data" -m immediate -w stop >/dev/null
        rm -rf "$dir"
        return 1
    fi

    export FREEZEOUT_TEST_POSTGRES_DIR="$dir"
    export FREEZEOUT_TEST_POSTGRES_OWNER="$user"
    export FREEZEOUT_TEST_POSTGRES_BIN="$bindir"
    export FREEZEOUT_TEST_POSTGRES_URL="postgresql+psycopg://$user@127.0.0.1:$port/freezeout_test"
    printf 'export FREEZEOUT_TEST_POSTGRES_DIR=%q\n' "$dir"
    printf 'export FREEZEOUT_TEST_POSTGRES_OWNER=%q\n' "$user"
    printf 'export FREEZEOUT_TEST_POSTGRES_BIN=%q\n' "$bindir"
    printf 'export FREEZEOUT_TEST_POSTGRES_URL=%q\n' "$FREEZEOUT_TEST_POSTGRES_URL"
}

stop_test_postgres() {
    local dir="${1:-${FREEZEOUT_TEST_POSTGRES_DIR:-}}"
    local user="${FREEZEOUT_TEST_POSTGRES_OWNER:-}"
    local bindir="${FREEZEOUT_TEST_POSTGRES_BIN:-$(_fzpg_bindir)}"
    case "$dir" in
        */freezeout-pg.*) ;;
        *)
            echo "postgres.sh: no test cluster to stop" >&2
            return 1
            ;;
    esac
    if [ -z "$user" ]; then
        user="$(stat -c %U "$dir")"
    fi
    if [ -f "$dir/data/postmaster.pid" ]; then
        if ! _fzpg_as "$user" "$bindir/pg_ctl" -D "$dir/data" -m fast -w -t 60 stop \
                >/dev/null; then
            echo "postgres.sh: fast shutdown failed; stopping immediately" >&2
            _fzpg_as "$user" "$bindir/pg_ctl" -D "$dir/data" -m immediate -w -t 30 stop \
                >/dev/null
        fi
    fi
    rm -rf "$dir"
    unset FREEZEOUT_TEST_POSTGRES_URL FREEZEOUT_TEST_POSTGRES_DIR
    unset FREEZEOUT_TEST_POSTGRES_OWNER FREEZEOUT_TEST_POSTGRES_BIN
    echo "unset FREEZEOUT_TEST_POSTGRES_URL FREEZEOUT_TEST_POSTGRES_DIR"
    echo "unset FREEZEOUT_TEST_POSTGRES_OWNER FREEZEOUT_TEST_POSTGRES_BIN"
}

if [ "${BASH_SOURCE[0]}" = "$0" ]; then
    case "${1:-}" in
        start) start_test_postgres ;;
        stop) stop_test_postgres "${2:-}" ;;
        *)
            echo "usage: $0 start|stop [DIR]   (or: source $0; start_test_postgres)" >&2
            exit 2
            ;;
    esac
fi
