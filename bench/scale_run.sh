#!/usr/bin/env bash
# The scale run: audits of growing image sets with a model of 5,000 units, one `auditsvc audit` process per size,
# each measured from outside (seconds per phase from audit.json, peak resident memory from the kernel, bytes
# spilled); prints a markdown table (docs/performance.md, "Scale").
#
# Usage (from the repository root, after `dotnet build src/AuditSvc.Cli -c Release`):
#   bench/scale_run.sh [SIZES] [MODEL]
#     SIZES  comma-separated image counts, default 1000,10000,50000,200000 (each at most 1,000,000)
#     MODEL  default tests/models/wide-5000-units.onnx (random weights; tests/models/make_models.py builds it)
#   AUDITSVC_SCALE_WORK  work folder (default .tmp/scale, ignored by git): image sets, audits, results
#   AUDITSVC_SCALE_CLI   the built auditsvc.dll to run (default the Release build; a copy lets you rebuild meanwhile)
#   AUDITSVC_MEMORY_TRACE  1 by default here: the audit prints where its memory sits at each phase boundary
#                          (kept in the results as memory_marks); 0 turns it off, collect forces a full collection first
#
# The image set is the invented demo scenario (`auditsvc demo-set`), made once in parts of 50,000 images with
# seeds 7, 8, 9, … (image i of a part depends only on its seed and i) and kept for later runs; the set of N
# images is the first N rows across the parts. Audits run with the product's defaults: the scores matrix is kept
# in memory up to 512 MiB (PassOptions.ScoreMemoryLimitBytes, `audit --scores-memory`) and spilled to DIR/.work/scores past that.
set -euo pipefail
sizes=${1:-1000,10000,50000,200000}
model=${2:-tests/models/wide-5000-units.onnx}
work=${AUDITSVC_SCALE_WORK:-.tmp/scale}
cli=${AUDITSVC_SCALE_CLI:-src/AuditSvc.Cli/bin/Release/net10.0/auditsvc.dll}
export AUDITSVC_MEMORY_TRACE=${AUDITSVC_MEMORY_TRACE:-1}
here=$(cd "$(dirname "$0")" && pwd)
part=50000
labels=sound,spotted,mouldy  # the demo scenario's classes; the scale model has three outputs and no recipe file
py=/usr/bin/python3
[[ -x $py ]] || py=python3

[[ -f $cli ]] || { echo "scale_run: $cli not found; run: dotnet build src/AuditSvc.Cli -c Release" >&2; exit 2; }
[[ -f $model ]] || { echo "scale_run: model $model not found" >&2; exit 2; }
IFS=, read -r -a ns <<< "$sizes"
max=0
for n in "${ns[@]}"; do
  [[ $n =~ ^[0-9]+$ ]] && (( n >= 1 && n <= 1000000 )) || { echo "scale_run: size '$n' is not a count from 1 to 1000000" >&2; exit 2; }
  (( n > max )) && max=$n
done

set_dir=$work/set
mkdir -p "$set_dir" "$work/results" "$work/logs"
parts=$(( (max + part - 1) / part ))
for p in $(seq 1 "$parts"); do
  if [[ ! -f $set_dir/part$p/.complete ]]; then
    echo "making image set part $p of $parts ($part images, seed $((6 + p)))"
    rm -rf "$set_dir/part$p"
    dotnet "$cli" demo-set --out "$set_dir/part$p" --count "$part" --seed $((6 + p)) > /dev/null
    touch "$set_dir/part$p/.complete"
  fi
done

echo "machine: $(nproc) cores, $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //'), $(free -g | awk '/Mem:/ {print $2}') GiB;" \
     "dotnet $(dotnet --version); load $(cut -d' ' -f1-3 /proc/loadavg)"
results=()
for n in "${ns[@]}"; do
  manifest=$set_dir/manifest-$n.csv
  if [[ ! -f $manifest ]]; then
    files=()
    for p in $(seq 1 "$parts"); do files+=("$set_dir/part$p/manifest.csv"); done
    # The header once, then rows with their part's folder in front of the image path, until n rows.
    awk -v n="$n" 'FNR == 1 { p++; if (p == 1) print; next } c < n { print "part" p "/" $0; c++ }' "${files[@]}" > "$manifest.tmp"
    mv "$manifest.tmp" "$manifest"
  fi
  out=$work/audit-$n
  rm -rf "$out"
  echo "== $n images: $(date -u +%H:%M:%S) UTC, load $(cut -d' ' -f1-3 /proc/loadavg)"
  set +e
  "$py" "$here/scale_measure.py" run "$work/results/$n.json" -- dotnet "$cli" audit --model "$model" --data "$manifest" --out "$out" \
    --labels "$labels" \
    2>&1 | tee "$work/logs/$n.log"
  code=${PIPESTATUS[0]}
  set -e
  (( code == 0 || code == 1 )) || echo "scale_run: the audit of $n images ended with exit $code (log: $work/logs/$n.log)" >&2
  results+=("$work/results/$n.json")
done
echo
"$py" "$here/scale_measure.py" table "${results[@]}" | tee "$work/table.md"
