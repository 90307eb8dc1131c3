#!/usr/bin/env bash
# Runs every TeachServe benchmark in Release (BenchmarkDotNet), then prints the summary table whose ratios
# (per-answer / floor, reference / per-answer) come from this same run. Extra arguments go to BenchmarkDotNet,
# e.g. ./run.sh --filter '*TeachingStep*'. A full run takes about 5–10 minutes on 2 cores.
set -euo pipefail
cd "$(dirname "$0")"
export DOTNET_CLI_TELEMETRY_OPTOUT=1 DOTNET_NOLOGO=1 DOTNET_SKIP_FIRST_TIME_EXPERIENCE=1

artifacts="${BENCH_ARTIFACTS:-BenchmarkDotNet.Artifacts}"
mkdir -p "$artifacts"
log="$artifacts/run.log"
filter=(--filter '*')
for arg in "$@"; do
  if [[ "$arg" == "--filter" ]]; then filter=(); fi
done

dotnet build -c Release --nologo -v quiet
dotnet bin/Release/net10.0/TeachServe.Benchmarks.dll "${filter[@]}" --artifacts "$artifacts" "$@" 2>&1 | tee "$log"

echo
echo "Machine: $(lscpu | sed -n 's/^Model name:[[:space:]]*//p'), $(nproc) cores, .NET $(dotnet --version)"
sed -n '/^## TeachServe project compile benchmarks\|^## TeachServe step benchmarks/,$p' "$log"
