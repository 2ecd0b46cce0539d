#!/usr/bin/env bash
# Scale-out on one machine: K bench processes at once, each on its own slice of N/K images and THREADS threads,
# started together so their phases overlap; prints each process's whole-pass rate and their sum.
# Usage: bench/scale_out.sh K N THREADS [MODEL]   (run from the repository root after a Release build)
set -euo pipefail
k=${1:?K}; n=${2:?N}; threads=${3:?THREADS}; model=${4:-}
cli=src/AuditSvc.Cli/bin/Release/net10.0/auditsvc.dll
out=$(mktemp -d)
for i in $(seq 1 "$k"); do
  dotnet "$cli" bench ${model:+--model "$model"} --images $((n / k)) --threads "$threads" --memory-factor 1 --rounds 2 --json \
    > "$out/$i.json" 2> "$out/$i.log" &
done
wait
python3 - "$out" "$k" <<'PY'
import json, sys, glob
rates = [json.loads(open(f).read().strip().splitlines()[-1])["whole_ips"] for f in sorted(glob.glob(sys.argv[1] + "/*.json"))]
print(f"processes {sys.argv[2]}: whole pass " + ", ".join(f"{r:.1f}" for r in rates) + f" images/s; sum {sum(rates):.1f}")
PY
rm -rf "$out"
