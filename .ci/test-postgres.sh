# A throwaway PostgreSQL cluster for the test run. Source this file, then:
#
#   start_test_postgres   # installs PostgreSQL if missing (Debian, as root), starts a cluster
#                         # on 127.0.0.1 at a free port in a temporary folder, creates a
#                         # database and exports SHARPZONE_TEST_POSTGRES_URL
#   stop_test_postgres    # stops the cluster and removes its folder (safe to call twice)
#
# Authentication: the superuser "sharpzone" is trusted on 127.0.0.1 only (no password);
# every other role must give its password (scram-sha-256), so tests can check that
# credentials from the URL, PGPASSWORD and ~/.pgpass really reach the server. No TCP
# listener but 127.0.0.1; the unix socket lives inside the temporary folder.
# Any failure here is fatal: a run that was meant to test PostgreSQL never skips it quietly.

TEST_POSTGRES_DIR=""
TEST_POSTGRES_BIN=""
TEST_POSTGRES_USER=""
TEST_POSTGRES_SUPERUSER="sharpzone"
TEST_POSTGRES_DATABASE="sharpzone_test"

_pg_say() { echo "test-postgres: $*" >&2; }

_pg_find_bin() {
    local found
    if command -v initdb >/dev/null 2>&1 && command -v pg_ctl >/dev/null 2>&1; then
        dirname "$(readlink -f "$(command -v pg_ctl)")"
        return 0
    fi
    # Debian keeps the server programs out of PATH, one folder per major version.
    found=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1)
    if [ -n "$found" ] && [ -x "$found/initdb" ] && [ -x "$found/pg_ctl" ]; then
        echo "$found"
        return 0
    fi
    return 1
}

_pg_install() {
    if [ "$(id -u)" != 0 ]; then
        _pg_say "PostgreSQL (initdb, pg_ctl) is not installed and only root can install it"
        return 1
    fi
    _pg_say "installing PostgreSQL from Debian packages"
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq || return 1
    # The common package first, told not to create and start a system-wide cluster: the
    # tests use their own, which stops with the run.
    apt-get install -y -qq postgresql-common </dev/null >/dev/null || return 1
    sed -ri 's/^#?[[:space:]]*create_main_cluster[[:space:]]*=.*$/create_main_cluster = false/' \
        /etc/postgresql-common/createcluster.conf || return 1
    apt-get install -y -qq postgresql </dev/null >/dev/null || return 1
}

_pg_as_owner() {
    # PostgreSQL refuses to run as root: run its programs as the folder's owner.
    if [ "$(id -u)" = 0 ]; then
        runuser -u "$TEST_POSTGRES_USER" -- "$@"
    else
        "$@"
    fi
}

start_test_postgres() {
    local port data log
    TEST_POSTGRES_BIN=$(_pg_find_bin) || { _pg_install && TEST_POSTGRES_BIN=$(_pg_find_bin); } || {
        _pg_say "FAILED: no PostgreSQL server programs found after installing"
        return 1
    }
    _pg_say "using $("$TEST_POSTGRES_BIN/pg_ctl" --version)"

    TEST_POSTGRES_DIR=$(mktemp -d -t sharpzone-pg.XXXXXX)
    if [ "$(id -u)" = 0 ]; then
        if id postgres >/dev/null 2>&1; then
            TEST_POSTGRES_USER=postgres
        else
            TEST_POSTGRES_USER=nobody
        fi
        chown "$TEST_POSTGRES_USER" "$TEST_POSTGRES_DIR"
    else
        TEST_POSTGRES_USER=$(id -un)
    fi
    data="$TEST_POSTGRES_DIR/data"
    log="$TEST_POSTGRES_DIR/server.log"
    port=$(python3 -c 'import socket; s = socket.socket(); s.bind(("127.0.0.1", 0)); print(s.getsockname()[1])')

    _pg_as_owner "$TEST_POSTGRES_BIN/initdb" -D "$data" -U "$TEST_POSTGRES_SUPERUSER" -E UTF8 --no-locale \
        --auth=reject >"$TEST_POSTGRES_DIR/initdb.log" 2>&1 || {
        cat "$TEST_POSTGRES_DIR/initdb.log" >&2
        _pg_say "FAILED: initdb"
        return 1
    }
    _pg_as_owner tee "$data/pg_hba.conf" >/dev/null <<EOF
# TYPE  DATABASE  USER                       ADDRESS        METHOD
local   all       $TEST_POSTGRES_SUPERUSER                  trust
host    all       $TEST_POSTGRES_SUPERUSER   127.0.0.1/32   trust
host    all       all                        127.0.0.1/32   scram-sha-256
EOF
    _pg_as_owner "$TEST_POSTGRES_BIN/pg_ctl" -D "$data" -l "$log" -w -t 60 \
        -o "-p $port -c listen_addresses=127.0.0.1 -k $TEST_POSTGRES_DIR -c fsync=off" start >/dev/null || {
        cat "$log" >&2 2>/dev/null
        _pg_say "FAILED: the server did not start"
        return 1
    }
    "$TEST_POSTGRES_BIN/createdb" -h 127.0.0.1 -p "$port" -U "$TEST_POSTGRES_SUPERUSER" "$TEST_POSTGRES_DATABASE" || {
        _pg_say "FAILED: cannot create database $TEST_POSTGRES_DATABASE"
        return 1
    }
    export SHARPZONE_TEST_POSTGRES_URL="postgresql+psycopg://$TEST_POSTGRES_SUPERUSER@127.0.0.1:$port/$TEST_POSTGRES_DATABASE"
    _pg_say "cluster running: $SHARPZONE_TEST_POSTGRES_URL (folder $TEST_POSTGRES_DIR)"
}

stop_test_postgres() {
    if [ -n "$TEST_POSTGRES_DIR" ] && [ -d "$TEST_POSTGRES_DIR" ]; then
        if [ -f "$TEST_POSTGRES_DIR/data/postmaster.pid" ]; then
            _pg_as_owner "$TEST_POSTGRES_BIN/pg_ctl" -D "$TEST_POSTGRES_DIR/data" -m fast -w -t 60 stop >/dev/null \
                || _pg_say "could not stop the cluster in $TEST_POSTGRES_DIR"
        fi
        rm -rf "$TEST_POSTGRES_DIR"
    fi
    TEST_POSTGRES_DIR=""
}
