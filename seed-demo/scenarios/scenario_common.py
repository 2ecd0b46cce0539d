"""Shared helpers of the invented validation scenarios: the catalogue, the generator and loading a set.

Everything these scripts touch is invented (glazed tiles on a kiln conveyor, drawn by our own C# generator).
"""
import os
import subprocess

import numpy as np
from PIL import Image

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(os.path.dirname(HERE))
MODELS = os.path.join(HERE, "models")
ALL_LABELS = ["sound", "crazed", "pitted", "chipped"]


def cli(*args, capture=False):
    """Runs the already built command line (Release), as the README's commands do."""
    cmd = ["dotnet", "run", "--no-build", "-c", "Release", "--project", os.path.join(REPO, "src/AuditSvc.Cli"), "--"]
    return subprocess.run(cmd + [str(a) for a in args], check=False, text=True,
                          stdout=subprocess.PIPE if capture else None, stderr=subprocess.PIPE if capture else None)


def catalogue():
    """The scenarios as `scenario-set --list` prints them: name -> dict of its columns."""
    out = cli("scenario-set", "--list", capture=True)
    if out.returncode != 0:
        raise SystemExit(f"scenario-set --list failed ({out.returncode}); build first: dotnet build -c Release\n{out.stderr}")
    lines = [l for l in out.stdout.splitlines() if l.strip()]
    start = next(i for i, l in enumerate(lines) if l.split()[0] == "name")
    header = lines[start].split()
    scenarios = {}
    for line in lines[start + 1:]:
        row = dict(zip(header, line.split()))
        row["classes"] = int(row["classes"])
        row["labels"] = ALL_LABELS[:row["classes"]]
        scenarios[row["name"]] = row
    return scenarios


def independent(scenario):
    """The agreement 1/K at which the cue is independent of the label, written with enough digits."""
    return f"{1.0 / scenario['classes']:.10f}"


def make_set(out, scenario, count, agreement, seed, cue="auto", bare=False):
    """Writes a set with scenario-set unless it is already there; returns the manifest path."""
    manifest = os.path.join(out, "manifest.csv")
    if not os.path.exists(manifest):
        args = ["scenario-set", "--scenario", scenario["name"], "--out", out, "--count", count,
                "--cue-agreement", agreement, "--seed", seed, "--cue", cue]
        if bare:
            args.append("--bare")
        r = cli(*args, capture=True)
        if r.returncode != 0:
            raise SystemExit(f"scenario-set failed: {r.stderr}")
    return manifest


def load_set(manifest, scenario):
    """Images as uint8 NHWC, labels as class indices in output order, and the cue flag per image."""
    folder = os.path.dirname(manifest)
    with open(manifest) as f:
        header = f.readline().strip().split(",")
        rows = [dict(zip(header, line.strip().split(","))) for line in f if line.strip()]
    x = np.stack([np.asarray(Image.open(os.path.join(folder, r["image"])).convert("RGB")) for r in rows])
    y = np.array([scenario["labels"].index(r["label"]) for r in rows])
    column = scenario["column"]
    cue = np.array([r.get(column) == scenario["present"] for r in rows])
    return {"x": x, "y": y, "cue": cue}
