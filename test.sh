#!/usr/bin/env bash
# The whole TeachServe test suite, on a fresh machine: installs what the tests need, then runs every test project.
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

dotnet restore TeachServe.sln
dotnet build TeachServe.sln --no-restore -c Release
dotnet test TeachServe.sln --no-build -c Release --logger "console;verbosity=normal" 2>&1 | tee /tmp/teachserve-test.log
