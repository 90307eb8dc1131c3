#!/usr/bin/env bash
# The whole TeachServe test suite, on a fresh machine: installs what the tests need, then runs every test project.
# The server tests run twice, on SQLite and on PostgreSQL; the cluster tests start real nodes (and nginx) on
# PostgreSQL. PostgreSQL is a throwaway cluster in a temp folder on a free loopback port, deleted on exit.
set -euo pipefail
cd "$(dirname "$0")"

export DOTNET_CLI_TELEMETRY_OPTOUT=1 DOTNET_NOLOGO=1 DOTNET_SKIP_FIRST_TIME_EXPERIENCE=1

# The browser tests drive Debian's Chromium through Playwright (Playwright's own browser download is not used).
if [ ! -x /usr/bin/chromium ]; then
  export DEBIAN_FRONTEND=noninteractive
  SUDO=""; [ "$(id -u)" -ne 0 ] && SUDO="sudo"
  $SUDO apt-get update
  $SUDO apt-get install -y --no-install-recommends chromium
fi

# Debian's PostgreSQL and nginx (the round-robin front of the cluster tests), and npm (for the OpenAPI linter).
# Only what is missing is installed: a machine whose Node.js comes from another source (with its own npm) would
# otherwise be asked for Debian's npm, which conflicts with it.
missing=()
ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1 || missing+=(postgresql)
command -v nginx >/dev/null 2>&1 || [[ -x /usr/sbin/nginx ]] || missing+=(nginx)
command -v npm >/dev/null 2>&1 || missing+=(nodejs npm)
if [[ ${#missing[@]} -gt 0 ]]; then
  if [[ $(id -u) -eq 0 ]]; then
    DEBIAN_FRONTEND=noninteractive apt-get update -qq
    DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "${missing[@]}" >/dev/null
  else
    echo "test.sh: ${missing[*]} needed: sudo apt-get install -y ${missing[*]}" >&2
    exit 1
  fi
fi

work=$(mktemp -d -t teachserve-test.XXXXXX)
chmod 755 "$work"
cleanup() { deploy/pg-cluster.sh destroy "$work/pg" || true; rm -rf "$work"; }
trap cleanup EXIT

dotnet restore TeachServe.sln
dotnet build TeachServe.sln --no-restore -c Release

TEACHSERVE_TEST_POSTGRES=$(deploy/pg-cluster.sh start "$work/pg")
export TEACHSERVE_TEST_POSTGRES
echo "test.sh: PostgreSQL on ${TEACHSERVE_TEST_POSTGRES%%;Username*}"

log=/tmp/teachserve-test.log
: > "$log"
status=0
# Every project; the server tests here run on SQLite.
dotnet test TeachServe.sln --no-build -c Release --logger "console;verbosity=normal" 2>&1 | tee -a "$log" || status=1
# The server tests again, each test on a PostgreSQL database of its own.
TEACHSERVE_TEST_PROVIDER=postgres dotnet test tests/TeachServe.Server.Tests --no-build -c Release \
  --logger "console;verbosity=normal" 2>&1 | tee -a "$log" || status=1

# The served OpenAPI document, linted by the pinned Redocly CLI that the script installs (tools/openapi-lint).
tools/openapi-lint/lint.sh 2>&1 | tee -a "$log" || status=1

# A summary last, so that the end of a long log names what failed.
echo "test.sh: summary"
grep -E "^(Total tests|\s+(Passed|Failed)):" "$log" | tr -s ' ' | awk '/^Total/ { if (l) print l; l = "  " $0; next } { l = l "," $0 } END { if (l) print l }' || true
grep -E "^openapi-lint: " "$log" || true
if [[ $status != 0 ]]; then
  echo "test.sh: failing tests:"
  grep -E "^\s+Failed TeachServe\." "$log" | sort -u || true
  grep -A4 -E "^\s+Failed TeachServe\." "$log" | grep -vE "^\s+Failed TeachServe|^--$|Error Message:" | head -60 || true
fi
exit $status
