#!/usr/bin/env bash
# Lints the OpenAPI document the server serves with the pinned Redocly CLI (package-lock.json): fails on any error,
# or on more than MAX_WARNINGS warnings. Needs Node.js and npm, and a Release build (./test.sh builds first).
set -euo pipefail
cd "$(dirname "$0")"
MAX_WARNINGS=10
export REDOCLY_TELEMETRY=off REDOCLY_SUPPRESS_UPDATE_NOTICE=true

command -v npm >/dev/null || { echo "openapi-lint: Node.js and npm are needed (e.g. apt-get install nodejs npm)" >&2; exit 1; }
# The pinned CLI's own requirement (package-lock.json, "engines"); Debian 12's nodejs (18) is too old for it.
node -e 'const [a, b] = process.versions.node.split(".").map(Number); process.exit(a > 20 || (a === 20 && b >= 19) ? 0 : 1)' \
  || { echo "openapi-lint: Node.js 20.19 or later is needed, found $(node --version)" >&2; exit 1; }
npm ci --no-audit --no-fund --loglevel=error

out=$(mktemp -d -t teachserve-openapi.XXXXXX)
trap 'rm -rf "$out"' EXIT
# The document as served: a test hosts the server and writes what GET /openapi/v1.json answers.
TEACHSERVE_OPENAPI_OUT="$out/v1.json" dotnet test ../../tests/TeachServe.Server.Tests --no-build -c Release \
  --filter "FullyQualifiedName~OpenApiContractTests.The_served_document_is_written_out_for_the_linter" >"$out/test.log" 2>&1 \
  || { cat "$out/test.log"; echo "openapi-lint: could not write the document" >&2; exit 1; }

status=0
npx --no-install redocly lint "$out/v1.json" --config redocly.yaml --format=stylish --max-problems 200 || status=1
npx --no-install redocly lint "$out/v1.json" --config redocly.yaml --format=json --max-problems 200 >"$out/lint.json" 2>/dev/null || true
warnings=$(node -e 'console.log(JSON.parse(require("fs").readFileSync(process.argv[1], "utf8")).totals.warnings)' "$out/lint.json")
if (( warnings > MAX_WARNINGS )); then
  echo "openapi-lint: $warnings warnings, more than the $MAX_WARNINGS allowed" >&2
  status=1
fi
echo "openapi-lint: $( ((status == 0)) && echo passed || echo FAILED ) ($warnings warnings)"
exit $status
