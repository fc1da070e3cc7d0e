#!/usr/bin/env bash
# The one test command. Installs what the tests need when it is missing (PostgreSQL server and Chromium, from
# Debian packages when apt-get is there), starts a throwaway PostgreSQL cluster on a free loopback port in a
# temporary folder, runs `dotnet test` on the solution, and removes the cluster on every exit path.
# Extra arguments go to `dotnet test`, e.g.  Tests/run.sh --filter "FullyQualifiedName~Doe"
set -euo pipefail

repo="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$repo"

say() { printf '[run.sh] %s\n' "$*" >&2; }
die() { say "$*"; exit 1; }

as_root() { if [ "$(id -u)" -eq 0 ]; then "$@"; elif command -v sudo >/dev/null; then sudo "$@"; else return 1; fi; }

apt_updated=0
apt_install() {
    command -v apt-get >/dev/null || return 1
    if [ "$apt_updated" -eq 0 ]; then as_root apt-get update -qq >/dev/null || return 1; apt_updated=1; fi
    as_root env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "$@" >/dev/null
}

find_pg_bin() {
    local dir
    for dir in $(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V -r); do
        [ -x "$dir/initdb" ] && [ -x "$dir/pg_ctl" ] && { echo "$dir"; return 0; }
    done
    if command -v pg_config >/dev/null && [ -x "$(pg_config --bindir)/initdb" ]; then pg_config --bindir; return 0; fi
    return 1
}

# --- what the tests need ------------------------------------------------------------------------------------
command -v dotnet >/dev/null || die "The .NET SDK (dotnet) is not on PATH; install .NET 10 from https://dot.net."

pg_bin="$(find_pg_bin || true)"
if [ -z "$pg_bin" ]; then
    say "PostgreSQL server binaries are missing; installing Debian's postgresql package."
    apt_install postgresql postgresql-contrib || die "Cannot install PostgreSQL here: install a PostgreSQL server (initdb, pg_ctl) and run again."
    pg_bin="$(find_pg_bin)" || die "PostgreSQL was installed but initdb was not found."
fi

chromium="${RUNFOLD_CHROMIUM:-/usr/bin/chromium}"
if [ ! -x "$chromium" ]; then
    say "Chromium is missing; installing Debian's chromium package."
    apt_install chromium || die "Cannot install Chromium here: install it (Debian package 'chromium') or set RUNFOLD_CHROMIUM to its path."
fi
export RUNFOLD_CHROMIUM="$chromium"

if ! command -v node >/dev/null || ! command -v npm >/dev/null; then
    say "Node.js or npm is missing (the schema checks of the deploy files use them); installing Debian's nodejs and npm packages."
    apt_install nodejs npm || die "Cannot install Node.js here: install Node.js and npm and run again."
fi

if ! command -v curl >/dev/null; then
    say "curl is missing (the cluster job script under test uses it); installing Debian's curl package."
    apt_install curl || die "Cannot install curl here: install it and run again."
fi

# --- a throwaway PostgreSQL cluster -------------------------------------------------------------------------
free_port() {
    local port
    for _ in $(seq 1 50); do
        port=$(( 20000 + RANDOM % 40000 ))
        (exec 3<>"/dev/tcp/127.0.0.1/$port") 2>/dev/null || { echo "$port"; return 0; }
    done
    return 1
}

work="$(mktemp -d -t runfold-pg.XXXXXX)"
run_pg() { if [ "$(id -u)" -eq 0 ]; then runuser -u postgres -- "$@"; else "$@"; fi; }
cleanup() {
    local code=$?
    if [ -f "$work/data/postmaster.pid" ]; then run_pg "$pg_bin/pg_ctl" -D "$work/data" -m immediate stop >/dev/null 2>&1 || true; fi
    rm -rf "$work"
    exit "$code"
}
trap cleanup EXIT
trap 'exit 130' INT
trap 'exit 143' TERM

if [ "$(id -u)" -eq 0 ]; then
    id postgres >/dev/null 2>&1 || die "Running as root, but there is no 'postgres' user to run the cluster as (PostgreSQL refuses root)."
    chown postgres "$work"
fi
port="$(free_port)" || die "No free loopback port found for PostgreSQL."
run_pg "$pg_bin/initdb" -D "$work/data" -U postgres -A trust -E UTF8 --locale=C >"$work/initdb.log" 2>&1 \
    || { cat "$work/initdb.log" >&2; die "initdb failed."; }
run_pg "$pg_bin/pg_ctl" -D "$work/data" -l "$work/postgres.log" -w -t 60 \
    -o "-c listen_addresses=127.0.0.1 -p $port -k $work -c max_connections=300 -c fsync=off -c synchronous_commit=off -c full_page_writes=off" \
    start >/dev/null || { cat "$work/postgres.log" >&2; die "PostgreSQL did not start."; }
say "PostgreSQL $("$pg_bin/postgres" --version | awk '{print $3}') on 127.0.0.1:$port (data in $work)."
export RUNFOLD_TEST_POSTGRES="Host=127.0.0.1;Port=$port;Username=postgres;Database=postgres;Pooling=true;Maximum Pool Size=100"
export RUNFOLD_TEST_PG_BIN="$pg_bin"
export RUNFOLD_TEST_ARTIFACTS="${RUNFOLD_TEST_ARTIFACTS:-$repo/Tests/artifacts}"
mkdir -p "$RUNFOLD_TEST_ARTIFACTS"

# --- the tests ----------------------------------------------------------------------------------------------
dotnet tool restore >/dev/null
dotnet build Runfold.slnx -c Release -nologo -clp:ErrorsOnly
dotnet test Runfold.slnx -c Release --no-build -nologo --logger "console;verbosity=normal" \
    --results-directory "$RUNFOLD_TEST_ARTIFACTS/results" "$@"
