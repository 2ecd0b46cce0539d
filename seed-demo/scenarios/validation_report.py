"""Writes docs/validation.md from the rows validate.py collected (one row per audit)."""
import datetime

IGNORES_BELOW = 0.1   # a block while true reliance is below this is a false block
RELIES_FROM = 0.3     # a pass while true reliance is at least this is a miss


def outcome(row):
    if row.get("error"):
        return "error"
    blocked = row["verdict"] == "block"
    if row["reliance"] < IGNORES_BELOW:
        return "false block" if blocked else "ok"
    if row["reliance"] >= RELIES_FROM:
        return "ok" if blocked else "miss"
    return "(between)"


def fmt(v, digits=3):
    if v is None:
        return "–"
    if isinstance(v, float) and (abs(v) < 1e-3 and v != 0):
        return f"{v:.1e}"
    return f"{v:.{digits}f}" if isinstance(v, float) else str(v)


def measures(cue):
    if not cue or not cue["measures"]:
        return "–"
    return "; ".join(f"{m['name']} {fmt(m['value'])} [{fmt(m['low'])}, {fmt(m['high'])}] p {fmt(m['p_value'])} n {m['n']}"
                     for m in cue["measures"])


def counts(rows):
    ignoring = [r for r in rows if r["reliance"] < IGNORES_BELOW]
    relying = [r for r in rows if r["reliance"] >= RELIES_FROM]
    return {
        "audits": len(rows),
        "ignoring": len(ignoring),
        "false_blocks": sum(outcome(r) == "false block" for r in ignoring),
        "relying": len(relying),
        "misses": sum(outcome(r) == "miss" for r in relying),
        "between": len(rows) - len(ignoring) - len(relying),
        "false_by_column": sum(outcome(r) == "false block" and not r["bare"]
                               and (r.get("cue_attribute") or {}).get("verdict") == "block" for r in ignoring),
        "innocent_blocks": sum(any(a in ("shift", "kiln") for a in r.get("other_blocks", [])) for r in rows),
        "errors": sum(bool(r.get("error")) for r in rows),
    }


def summary_table(rows, split):
    groups = {}
    for r in rows:
        groups.setdefault(split(r), []).append(r)
    keys = sorted(groups)  # (sort key, heading)
    c = {k: counts(groups[k]) for k in keys}
    lines = ["| | " + " | ".join(k[1] for k in keys) + " |", "|---|" + "---|" * len(keys)]
    for label, key in [("audits", "audits"), ("of models ignoring the cue (reliance < 0.1)", "ignoring"),
                       ("**false blocks** (block while reliance < 0.1)", "false_blocks"),
                       ("… of which the cue's own column blocked", "false_by_column"),
                       ("of models relying on it (reliance ≥ 0.3)", "relying"), ("**misses** (pass while reliance ≥ 0.3)", "misses"),
                       ("of models in between (0.1 ≤ reliance < 0.3)", "between"),
                       ("blocks on an innocent column (shift, kiln)", "innocent_blocks"), ("audits that failed", "errors")]:
        lines.append(f"| {label} | " + " | ".join(str(c[k][key]) for k in keys) + " |")
    return lines


def reason_table(rows):
    tally = {}
    for r in rows:
        if r.get("error") or r["verdict"] != "block":
            continue
        for reason in r["reasons"]:
            attribute = reason["attribute"] or "–"
            kind = "inferred place" if attribute.startswith("place:") else "cue column" if attribute == (r.get("cue_attribute") or {}).get("name") else attribute
            key = (outcome(r), "bare" if r["bare"] else "columns", kind, reason["measure"] or reason["kind"])
            tally[key] = tally.get(key, 0) + 1
    lines = ["| outcome | set | attribute | measure | reasons |", "|---|---|---|---|---|"]
    lines += [f"| {k[0]} | {k[1]} | {k[2]} | {k[3]} | {n} |" for k, n in sorted(tally.items())]
    return lines


def write_report(path, rows, title, engine, count, seconds, subset):
    """One markdown page: counts by set and agreement, what blocked, and every audit's row."""
    agreements = sorted({r["agreement"] for r in rows})
    out = [f"# Validation on invented scenarios{': ' + title if title else ''}", "",
           "Everything here is **invented**: glazed ceramic tiles on a kiln conveyor, graded by surface flaw, drawn by our",
           "own generator (`auditsvc scenario-set`), and small CNNs trained on them (`seed-demo/scenarios/`). No real",
           "factory, camera or image is described. Written by `seed-demo/scenarios/validate.py`"
           + (" with `--subset`" if subset else "") + ".", "",
           f"- Engine: `{engine}`; default policy.",
           f"- Run on {datetime.date.today().isoformat()}: {len(rows)} audits of {count} images each, cue agreements "
           + ", ".join(f"{a:g}" for a in agreements) + f", {seconds / 60:.1f} min.",
           "- True reliance: accuracy on aligned minus conflicting counterfactual twins of a held-out set "
           "(`reliance.json`); it is a property of the model, the same for every audit of it.",
           "- With columns: the manifest names the cue's attribute plus two innocent ones (`shift`, `kiln`). Bare: "
           "`image,label` only, so the cue can only be found as an inferred place cue; the bare rows show the "
           "strongest attribute the audit made up.", "",
           "## Counts", "", "By set (with columns / bare):", ""]
    out += summary_table(rows, lambda r: (r["bare"], "bare" if r["bare"] else "with columns"))
    out += ["", "By set and agreement:", ""]
    out += summary_table(rows, lambda r: ((r["bare"], r["agreement"]), f"{'bare' if r['bare'] else 'columns'} A={r['agreement']:g}"))
    out += ["", "By set and cue kind:", ""]
    out += summary_table(rows, lambda r: ((r["bare"], r["kind"]), f"{'bare' if r['bare'] else 'columns'} {r['kind']}"))
    out += ["", "What made the verdict block, per audit outcome (each blocking reason's attribute kind and measure):", ""]
    out += reason_table(rows)
    out += ["", "## Every audit", ""]
    for scenario in dict.fromkeys(r["scenario"] for r in rows):
        rs = [r for r in rows if r["scenario"] == scenario]
        out += [f"### {scenario} ({rs[0]['kind']}, {rs[0]['classes']} classes)", "",
                "| model | true reliance | A | set | verdict | cue attribute | leakage | its measures | other blocks | outcome |",
                "|---|---|---|---|---|---|---|---|---|---|"]
        for r in rs:
            cue = r.get("cue_attribute")
            out.append("| " + " | ".join([
                r["model"], f"{r['reliance']:+.3f}", f"{r['agreement']:g}", "bare" if r["bare"] else "columns",
                r.get("verdict", "–"), cue["name"] if cue else "–", fmt(cue["leakage"]) if cue else "–", measures(cue),
                ", ".join(r.get("other_blocks", [])) or "–", outcome(r) if not r.get("error") else f"error: {r['error']}",
            ]) + " |")
        out.append("")
    with open(path, "w") as f:
        f.write("\n".join(out))
