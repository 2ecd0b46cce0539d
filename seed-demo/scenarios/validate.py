#!/usr/bin/python3
"""Audits every model of the invented validation scenarios and publishes false blocks and misses.

For each model (seed-demo/scenarios/models/*.onnx, true reliance from reliance.json) and each agreement A, it makes
an audit set with `scenario-set` (the cue linked to its class at A), once with attribute columns and once bare
(image and label only), runs `audit` on the current engine and reads audit.json. It writes docs/validation-scenarios.md:
one row per (model, agreement, columns/bare) and the counts of
  false blocks: verdict block while true reliance < 0.1;
  misses:       true reliance >= 0.3 and verdict pass.
Everything audited here is invented (glazed tiles drawn by our own generator).

Run from anywhere after `dotnet build -c Release`:
    /usr/bin/python3 seed-demo/scenarios/validate.py [--subset] [--models a,b] [--agreements 0.5,0.95] [--count 900]
"""
import argparse
import json
import os
import shutil
import subprocess
import time

from scenario_common import HERE, MODELS, REPO, cli, catalogue, make_set
from validation_report import write_report

# Audit sets have seeds of their own: never the training (1000s, 2000s) or held-out (9000s) seeds.
AUDIT_SEED = 5000
SUBSET_MODELS = ["stamp-small-bottom-right-relies", "stamp-small-bottom-right-ignores", "cast-warm-relies", "cast-warm-ignores"]


def summarise(audit, scenario, bare):
    """The verdict, the cue's attribute (or the strongest inferred one when bare) and any other blocking attribute."""
    attributes = audit["attributes"]
    if bare:
        cue = max(attributes, key=lambda a: a["leakage"] if a["leakage"] is not None else -1, default=None)
    else:
        cue = next((a for a in attributes if a["name"] == scenario["column"]), None)
    return {
        "verdict": audit["verdict"],
        "cue_attribute": None if cue is None else {
            "name": cue["name"], "leakage": cue["leakage"], "verdict": cue["verdict"], "cramers_v": cue["cramers_v"],
            "confounded": cue["confounded"],
            "measures": [{k: m[k] for k in ("name", "value", "n", "low", "high", "p_value")} for m in cue["measures"]],
        },
        "other_blocks": [a["name"] for a in attributes if a["verdict"] == "block" and a is not cue],
        "reasons": [{k: r[k] for k in ("kind", "attribute", "measure", "message")} for r in audit["reasons"]],
    }


def run_audit(model_path, manifest, out):
    if os.path.exists(out):
        shutil.rmtree(out)
    t0 = time.time()
    r = cli("audit", "--model", model_path, "--data", manifest, "--out", out, capture=True)
    seconds = time.time() - t0
    if r.returncode not in (0, 1):
        return None, seconds, f"exit {r.returncode}: {r.stderr.strip().splitlines()[-1] if r.stderr.strip() else ''}"
    with open(os.path.join(out, "audit.json")) as f:
        return json.load(f), seconds, None


def engine_commit():
    """The last commit that touched the engine (Core, Compute), and the checkout it ran from."""
    def git(*args):
        return subprocess.run(["git", "-C", REPO, *args], capture_output=True, text=True).stdout.strip()
    engine = git("log", "-1", "--format=%h (%cs)", "--", "src/AuditSvc.Core", "src/AuditSvc.Compute")
    return f"{engine}, run from {git('rev-parse', '--abbrev-ref', 'HEAD')} at {git('log', '-1', '--format=%h')}"


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--models", default="", help="comma-separated model names (default: every model in reliance.json)")
    ap.add_argument("--agreements", default="0.5,0.75,0.95")
    ap.add_argument("--count", type=int, default=900, help="images per audit set")
    ap.add_argument("--subset", action="store_true",
                    help=f"a CI-sized run: {', '.join(SUBSET_MODELS)} at A = 0.95 with 300 images (unless given)")
    ap.add_argument("--work", default="/tmp/auditsvc-scenario-validate", help="folder for sets and audits")
    ap.add_argument("--out", default=os.path.join(REPO, "docs", "validation-scenarios.md"))
    ap.add_argument("--title", default="", help="what this run is, e.g. 'baseline before the issue-8 engine changes'")
    ap.add_argument("--report-only", action="store_true", help="rewrite the report from WORK/results.json without auditing")
    args = ap.parse_args()
    results = os.path.join(args.work, "results.json")
    if args.report_only:
        with open(results) as f:
            saved = json.load(f)
        write_report(args.out, saved["rows"], title=args.title or saved["title"], **saved["meta"])
        print(f"wrote {args.out}")
        return

    with open(os.path.join(HERE, "reliance.json")) as f:
        reliance = json.load(f)
    models = [m for m in args.models.split(",") if m]
    agreements = [a for a in args.agreements.split(",") if a]
    count = args.count
    if args.subset:
        models = models or SUBSET_MODELS
        agreements = agreements if args.agreements != ap.get_default("agreements") else ["0.95"]
        count = count if args.count != ap.get_default("count") else 300
    models = models or sorted(reliance)
    scenarios = catalogue()
    names = list(scenarios)

    rows = []
    started = time.time()
    for model in models:
        name = model.rsplit("-", 1)[0]
        sc = scenarios[name]
        true = reliance[model]
        for a in agreements:
            for bare in (False, True):
                seed = AUDIT_SEED + 10 * names.index(name)
                set_dir = os.path.join(args.work, "sets", name, f"A{a}-n{count}-{'bare' if bare else 'columns'}")
                manifest = make_set(set_dir, sc, count, a, seed, bare=bare)
                out = os.path.join(args.work, "audits", model, f"A{a}-{'bare' if bare else 'columns'}")
                audit, seconds, error = run_audit(os.path.join(MODELS, f"{model}.onnx"), manifest, out)
                row = {"model": model, "scenario": name, "kind": sc["kind"], "classes": sc["classes"],
                       "agreement": float(a), "bare": bare, "reliance": true["reliance"], "accuracy": true["accuracy"],
                       "audit_seconds": round(seconds, 1), "error": error}
                if audit is not None:
                    row.update(summarise(audit, sc, bare))
                rows.append(row)
                print(f"{model:36s} A={a:5s} {'bare   ' if bare else 'columns'} reliance {true['reliance']:+.3f} "
                      f"-> {row.get('verdict', error)} ({seconds:.1f} s)", flush=True)

    meta = {"engine": engine_commit(), "count": count, "seconds": time.time() - started, "subset": args.subset}
    os.makedirs(args.work, exist_ok=True)
    with open(results, "w") as f:
        json.dump({"title": args.title, "meta": meta, "rows": rows}, f, indent=2)
    write_report(args.out, rows, title=args.title, **meta)
    print(f"wrote {args.out}")


if __name__ == "__main__":
    main()
