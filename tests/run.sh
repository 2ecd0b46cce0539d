#!/usr/bin/env bash
# Runs every test of AuditSvc on this machine. Installs what the tests need when it is missing
# (PostgreSQL and Chromium from Debian's packages; needs root or sudo), starts a private PostgreSQL
# cluster for the run, and stops it again. Usage: tests/run.sh [extra dotnet test arguments]
set -euo pipefail
here="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
cd "$here"

sudo_() { if [ "$(id -u)" = 0 ]; then "$@"; else sudo "$@"; fi; }
need_apt=()
pg_bin=$(ls -d /usr/lib/postgresql/*/bin 2>/dev/null | sort -V | tail -n 1 || true)
[ -n "$pg_bin" ] && [ -x "$pg_bin/initdb" ] || need_apt+=(postgresql)
command -v chromium >/dev/null 2>&1 || need_apt+=(chromium)
command -v dotnet >/dev/null 2>&1 || { echo "tests/run.sh: the .NET 10 SDK is needed (dotnet on PATH)" >&2; exit 2; }
if [ ${#need_apt[@]} -gt 0 ]; then
  echo "tests/run.sh: installing ${need_apt[*]} from Debian's packages"
  sudo_ apt-get update -qq
  sudo_ env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends "${need_apt[@]}" >/dev/null
  pg_bin=$(ls -d /usr/lib/postgresql/*/bin | sort -V | tail -n 1)
fi

# A private PostgreSQL cluster on a free loopback port, owned by an unprivileged user.
work=$(mktemp -d /tmp/auditsvc-tests.XXXXXX)
chmod 755 "$work"
pg_user=$(id -un)
[ "$(id -u)" = 0 ] && pg_user=postgres
id "$pg_user" >/dev/null 2>&1 || sudo_ useradd --system --no-create-home "$pg_user"
port=$(( 20000 + RANDOM % 20000 ))
run_pg() {
  if [ "$(id -un)" = "$pg_user" ]; then "$@"
  elif [ "$(id -u)" = 0 ]; then runuser -u "$pg_user" -- "$@"
  else sudo -u "$pg_user" "$@"; fi
}
mkdir -p "$work/pg" && chown "$pg_user" "$work/pg"
run_pg "$pg_bin/initdb" -D "$work/pg/data" -U auditsvc --auth=trust -E UTF8 >/dev/null
run_pg "$pg_bin/pg_ctl" -D "$work/pg/data" -l "$work/pg/log" -o "-p $port -k $work/pg -c listen_addresses=127.0.0.1 -c fsync=off -c max_connections=200" -w start >/dev/null
cleanup() { run_pg "$pg_bin/pg_ctl" -D "$work/pg/data" -m fast stop >/dev/null 2>&1 || true; rm -rf "$work"; }
trap cleanup EXIT
export AUDITSVC_TEST_DB="Host=127.0.0.1;Port=$port;Username=auditsvc;Database=postgres;Pooling=true"
export AUDITSVC_CHROMIUM="$(command -v chromium)"
export DOTNET_CLI_TELEMETRY_OPTOUT=1 DOTNET_NOLOGO=1

set +e
dotnet test AuditSvc.sln -c Release --logger "console;verbosity=normal" "$@" 2>&1 | tee "$work/test.log"
status=${PIPESTATUS[0]}
set -e
# One plain closing line for every project together.
awk '/^ +Passed: [0-9]+ *$/ { p += $2 } /^ +Failed: [0-9]+ *$/ { f += $2 } /^ +Skipped: [0-9]+ *$/ { s += $2 }
     END { printf "tests: %d passed, %d failed, %d skipped\n", p, f, s }' "$work/test.log"
exit "$status"
