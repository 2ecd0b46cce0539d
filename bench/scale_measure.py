#!/usr/bin/python3
"""Runs one `auditsvc audit` and measures it from outside; or writes the scale table from such measurements.

    scale_measure.py run OUT.json -- dotnet auditsvc.dll audit --model M --data D --out DIR
    scale_measure.py table RESULT.json...

`run` starts the command, stamps each progress line of its stderr with the time, samples the process's resident
memory (VmRSS) and the bytes in its spill folder (DIR/.work/scores) every half second, takes the exact peak
resident memory from the kernel when the process ends (wait4's ru_maxrss), and writes OUT.json with the audit's
own seconds per phase (audit.json `phases`), the CPU seconds per phase (all threads; they move less with other
users' load than wall seconds), the sampled peak per phase and the whole run's wall time. The command's
stdout and stderr go on to this script's stdout, so a log keeps the progress lines.

Standard library only (bench/scale_run.sh calls it with whatever python3 is on the machine).
"""
import json
import os
import subprocess
import sys
import threading
import time

PHASES = ["intake", "activation run", "analysis", "interventions", "report"]


def rss_kib(pid):
    try:
        with open(f"/proc/{pid}/status") as f:
            for line in f:
                if line.startswith("VmRSS:"):
                    return int(line.split()[1])
    except OSError:
        pass
    return None


def cpu_seconds(pid):
    """User + system CPU seconds of every thread of the process so far (/proc/PID/stat fields 14 and 15)."""
    try:
        with open(f"/proc/{pid}/stat") as f:
            fields = f.read().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    except (OSError, IndexError, ValueError):
        return None


def folder_bytes(path):
    total = 0
    try:
        with os.scandir(path) as it:
            for e in it:
                try:
                    total += e.stat(follow_symlinks=False).st_size
                except OSError:
                    pass
    except OSError:
        pass
    return total


def memory_mark(line):
    """One AUDITSVC_MEMORY_TRACE line: where, and its figures in MiB by name (resident, high-water, managed, large …)."""
    where, _, rest = line[len("[memory] "):].strip().partition(": ")
    figures = {}
    for part in rest.replace("(", ",").replace(")", ",").replace(";", ",").split(","):
        words = part.split()
        if len(words) >= 2 and words[-1].replace(".", "", 1).isdigit() and not words[-2].isdigit():
            figures[" ".join(w for w in words[:-1] if w not in ("after", "last", "collection:", "so", "far"))] = float(words[-1])
        elif len(words) >= 3 and words[-1] == "MiB" and words[-2].isdigit():
            figures[" ".join(words[:-2])] = float(words[-2])
    return {"where": where, "mib": figures}


def out_dir(cmd):
    return cmd[cmd.index("--out") + 1] if "--out" in cmd else "audit-out"


def run(result_path, cmd):
    spill = os.path.join(out_dir(cmd), ".work", "scores")
    start = time.monotonic()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, bufsize=1)
    phase = {"name": "intake"}  # the process starts in intake, before its first stage line
    peaks = {}
    spill_peak = [0]
    marks = [("intake", 0.0)]  # (phase, CPU seconds of the process when it began)
    memory_marks = []
    lock = threading.Lock()

    def read_stderr():
        for line in proc.stderr:
            now = time.monotonic() - start
            sys.stdout.write(f"[{now:8.1f} s] {line}")
            sys.stdout.flush()
            if line.startswith("[memory] "):
                # AUDITSVC_MEMORY_TRACE's marks: kept with the time they came, never a phase.
                with lock:
                    memory_marks.append({"seconds": round(now, 1), **memory_mark(line)})
                continue
            if line.startswith("[") and "]" in line:
                name = line[1:line.index("]")]
                if name not in PHASES and name != "done":
                    continue
                name = "report" if name == "done" else name
                cpu = cpu_seconds(proc.pid)
                with lock:
                    phase["name"] = name
                    if cpu is not None:
                        marks.append((name, cpu))

    def read_stdout():
        for line in proc.stdout:
            sys.stdout.write(line)
            sys.stdout.flush()

    threads = [threading.Thread(target=read_stderr, daemon=True), threading.Thread(target=read_stdout, daemon=True)]
    for t in threads:
        t.start()
    status = None
    while status is None:
        pid_done, st, usage = os.wait4(proc.pid, os.WNOHANG)
        if pid_done:
            status = st
            break
        r = rss_kib(proc.pid)
        with lock:
            name = phase["name"]
        if r is not None:
            peaks[name] = max(peaks.get(name, 0), r)
        spill_peak[0] = max(spill_peak[0], folder_bytes(spill))
        time.sleep(0.5)
    wall = time.monotonic() - start
    for t in threads:
        t.join(timeout=5)
    code = os.waitstatus_to_exitcode(status)
    proc.returncode = code
    audit = {}
    audit_json = os.path.join(out_dir(cmd), "audit.json")
    if code in (0, 1) and os.path.exists(audit_json):
        with open(audit_json) as f:
            audit = json.load(f)
    total_cpu = usage.ru_utime + usage.ru_stime
    cpu_by_phase = {}
    for (name, begun), (_, ended) in zip(marks, marks[1:] + [("end", total_cpu)]):
        cpu_by_phase[name] = round(cpu_by_phase.get(name, 0) + ended - begun, 1)
    with open("/proc/loadavg") as f:
        load = f.read().split()[:3]
    result = {
        "command": cmd,
        "exit": code,
        "wall_seconds": round(wall, 1),
        "peak_rss_mib": round(usage.ru_maxrss / 1024, 1),
        "sampled_peak_rss_mib_by_phase": {k: round(v / 1024, 1) for k, v in peaks.items()},
        "spill_peak_mib": round(spill_peak[0] / 2**20, 1),
        "cpu_seconds": round(total_cpu, 1),
        "cpu_seconds_by_phase": cpu_by_phase,
        "phases": audit.get("phases"),
        "images": (audit.get("pass") or {}).get("scored"),
        "units": (audit.get("pass") or {}).get("units"),
        "images_per_second": (audit.get("pass") or {}).get("images_per_second"),
        "intervention_runs": (audit.get("pass") or {}).get("intervention_runs"),
        "audit_json_mib": round(os.path.getsize(audit_json) / 2**20, 1) if audit else None,
        "findings": len(audit.get("findings") or []),
        "verdict": audit.get("verdict"),
        "load_after": load,
        "memory_marks": memory_marks,
    }
    with open(result_path, "w") as f:
        json.dump(result, f, indent=1)
    print(json.dumps({k: result[k] for k in ("exit", "wall_seconds", "peak_rss_mib", "spill_peak_mib", "phases")}))
    return code


def table(paths):
    rows = [json.load(open(p)) for p in paths]
    rows.sort(key=lambda r: r.get("images") or 0)
    out = ["| images | units | intake s | activation run s | analysis s | interventions s | report s | wall s | peak resident MiB | "
           "spilled scores MiB | findings | load after |",
           "|---|---|---|---|---|---|---|---|---|---|---|---|"]
    def count(r):
        return f"{r['images']:,}" if r.get("images") else "–"

    for r in rows:
        p = r.get("phases") or {}

        def s(k):
            v = p.get(k)
            return "–" if v is None else f"{v:.1f}"
        out.append(f"| {count(r)} | {r.get('units') or '–'} | {s('intake')} | {s('pass')} | {s('analysis')} | "
                   f"{s('interventions')} | {s('report')} | {r['wall_seconds']:.0f} | {r['peak_rss_mib']:.0f} | "
                   f"{r['spill_peak_mib']:.0f} | {r.get('findings')} | {' '.join(r.get('load_after') or [])} |"
                   if r["exit"] in (0, 1) else f"| (exit {r['exit']}) {r['command']} |")
    out.append("")
    out.append("Peak resident memory sampled every 0.5 s, per phase (MiB):")
    out.append("")
    out.append("| images | " + " | ".join(PHASES) + " |")
    out.append("|---|" + "---|" * len(PHASES))
    rows = [r for r in rows if r["exit"] in (0, 1)]
    for r in rows:
        by = r.get("sampled_peak_rss_mib_by_phase") or {}
        out.append(f"| {count(r)} | " + " | ".join(f"{by[k]:.0f}" if k in by else "–" for k in PHASES) + " |")
    out.append("")
    out.append("CPU seconds per phase, all threads (intake includes the runtime's start):")
    out.append("")
    out.append("| images | " + " | ".join(PHASES) + " | total |")
    out.append("|---|" + "---|" * (len(PHASES) + 1))
    for r in rows:
        by = r.get("cpu_seconds_by_phase")
        if by:
            out.append(f"| {count(r)} | " + " | ".join(f"{by[k]:.1f}" if k in by else "–" for k in PHASES) + f" | {r['cpu_seconds']:.1f} |")
    for r in rows:
        marks = r.get("memory_marks") or []
        if not marks:
            continue
        out.append("")
        out.append(f"Memory at the audit's own marks, {count(r)} images (AUDITSVC_MEMORY_TRACE; MiB; heap figures as of the last collection):")
        out.append("")
        out.append("| s | mark | resident | high-water | managed heap | large-object heap | committed | native (resident − committed) |")
        out.append("|---|---|---|---|---|---|---|---|")
        for m in marks:
            f = m["mib"]
            def g(k):
                return f"{f[k]:.0f}" if k in f else "–"
            native = f"{f['resident'] - f['committed']:.0f}" if "resident" in f and "committed" in f else "–"
            out.append(f"| {m['seconds']:.0f} | {m['where']} | {g('resident')} | {g('high-water')} | {g('heap')} | {g('large')} | {g('committed')} | {native} |")
    print("\n".join(out))


if __name__ == "__main__":
    if len(sys.argv) >= 4 and sys.argv[1] == "run" and "--" in sys.argv:
        sys.exit(run(sys.argv[2], sys.argv[sys.argv.index("--") + 1:]))
    elif len(sys.argv) >= 3 and sys.argv[1] == "table":
        table(sys.argv[2:])
    else:
        sys.exit(__doc__)
