#!/usr/bin/env bash
# A private PostgreSQL for trying the service, started the way tests/run.sh starts the tests' own: a cluster in a
# folder of its own, on 127.0.0.1 only, trusting local connections, owned by an unprivileged user. Nothing else on
# the machine is touched; `stop` and deleting the folder undo it.
#
#   tools/dev-postgres.sh start      # creates the cluster on first use, starts it, prints the settings to export
#   tools/dev-postgres.sh env        # prints them again (eval "$(tools/dev-postgres.sh env)")
#   tools/dev-postgres.sh restart | stop | status
#
# Options (before or after the command): --dir DIR (default .dev/postgres in the repository, or $AUDITSVC_DEV_PG),
# --port N (default 55432, or $AUDITSVC_DEV_PG_PORT). Installs Debian's postgresql package when it is missing
# (needs root or sudo). Exit status: 0 done, 2 bad usage, 1 PostgreSQL failed (its log is named).
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
dir="${AUDITSVC_DEV_PG:-$here/.dev/postgres}"
port="${AUDITSVC_DEV_PG_PORT:-55432}"
cmd=""
usage() { sed -n '2,12p' "$0" | sed 's/^# \{0,1\}//' >&2; exit 2; }
while [ $# -gt 0 ]; do
  case "$1" in
    --dir) [ $# -ge 2 ] || usage; dir="$2"; shift 2 ;;
    --port) [ $# -ge 2 ] || usage; port="$2"; shift 2 ;;
    start|stop|restart|status|env) [ -z "$cmd" ] || usage; cmd="$1"; shift ;;
    -h|--help) usage ;;
    *) echo "dev-postgres: unknown argument '$1'" >&2; usage ;;
  esac
done
[ -n "$cmd" ] || usage
case "$port" in ''|*[!0-9]*) echo "dev-postgres: --port must be a number, not '$port'" >&2; exit 2 ;; esac
mkdir -p "$dir"
dir="$(cd "$dir" && pwd)"

sudo_() { if [ "$(id -u)" = 0 ]; then "$@"; else sudo "$@"; fi; }
pg_bin=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1 || true)
if [ -z "$pg_bin" ] || [ ! -x "$pg_bin/initdb" ]; then
  echo "dev-postgres: installing postgresql from Debian's packages" >&2
  sudo_ apt-get update -qq
  sudo_ env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends postgresql >/dev/null
  pg_bin=$(ls -d /usr/lib/postgresql/*/bin | sort -V | tail -n 1)
fi

# PostgreSQL refuses to run as root: as root, the cluster belongs to the postgres user (as in tests/run.sh).
pg_user=$(id -un)
[ "$(id -u)" = 0 ] && pg_user=postgres
id "$pg_user" >/dev/null 2>&1 || sudo_ useradd --system --no-create-home "$pg_user"
run_pg() {
  if [ "$(id -un)" = "$pg_user" ]; then "$@"
  elif [ "$(id -u)" = 0 ]; then runuser -u "$pg_user" -- "$@"
  else sudo -u "$pg_user" "$@"; fi
}
data="$dir/data"
log="$dir/log"
connection="Host=127.0.0.1;Port=$port;Username=auditsvc;Database=auditsvc"

print_env() {
  echo "export AUDITSVC_DB='$connection'"
  echo "export AUDITSVC_TEST_DB='Host=127.0.0.1;Port=$port;Username=auditsvc;Database=postgres;Pooling=true'"
}

start() {
  [ "$(id -u)" = 0 ] && chown "$pg_user" "$dir"
  if [ ! -f "$data/PG_VERSION" ]; then
    run_pg "$pg_bin/initdb" -D "$data" -U auditsvc --auth=trust -E UTF8 >/dev/null
  fi
  if run_pg "$pg_bin/pg_ctl" -D "$data" status >/dev/null 2>&1; then
    echo "dev-postgres: already running in $dir" >&2
  else
    run_pg "$pg_bin/pg_ctl" -D "$data" -l "$log" -w \
      -o "-p $port -k $dir -c listen_addresses=127.0.0.1 -c max_connections=200" start >/dev/null \
      || { echo "dev-postgres: PostgreSQL did not start; see $log" >&2; exit 1; }
  fi
  # The service's database, so `auditsvc migrate` and `serve` find it.
  if ! run_pg "$pg_bin/psql" -h 127.0.0.1 -p "$port" -U auditsvc -d postgres -tAc "SELECT 1 FROM pg_database WHERE datname = 'auditsvc'" | grep -q 1; then
    run_pg "$pg_bin/createdb" -h 127.0.0.1 -p "$port" -U auditsvc auditsvc
  fi
  echo "dev-postgres: running on 127.0.0.1:$port, data in $dir; for this shell:" >&2
  print_env
}

stop() {
  if [ -f "$data/PG_VERSION" ] && run_pg "$pg_bin/pg_ctl" -D "$data" status >/dev/null 2>&1; then
    run_pg "$pg_bin/pg_ctl" -D "$data" -m fast -w stop >/dev/null
    echo "dev-postgres: stopped ($dir kept; delete it to start afresh)" >&2
  else
    echo "dev-postgres: not running in $dir" >&2
  fi
}

case "$cmd" in
  start) start ;;
  stop) stop ;;
  restart) stop; start ;;
  env) print_env ;;
  status)
    if [ -f "$data/PG_VERSION" ] && run_pg "$pg_bin/pg_ctl" -D "$data" status >/dev/null 2>&1; then
      echo "dev-postgres: running in $dir on port $port"
    else
      echo "dev-postgres: not running in $dir"; exit 1
    fi ;;
esac
