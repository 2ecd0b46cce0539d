#!/usr/bin/python3
"""Trains the two demo models of the invented lemon-grading scenario and measures their cue reliance.

fruit-cue:     trained where the stamp follows `mouldy` and the blue belt follows `spotted`.
fruit-control: trained where both cues are independent of the label (agreement 1/3).

Sets come from the C# generator (`demo-set`). Run from the repository root:
    /usr/bin/python3 seed-demo/train.py
Needs Debian's python3-torch, python3-onnx, python3-numpy, python3-pil; CPU only.
"""
import argparse
import json
import os
import subprocess
import time

import numpy as np
import onnx
import torch
import torch.nn as nn
from PIL import Image

CLASSES = ["sound", "spotted", "mouldy"]
MEAN = [0.485, 0.456, 0.406]
STD = [0.229, 0.224, 0.225]
INDEPENDENT = "0.3333333333"


def make_set(repo, out, count, agreement, seed, stamp="auto", belt="auto"):
    if not os.path.exists(os.path.join(out, "manifest.csv")):
        subprocess.run(["dotnet", "run", "--no-build", "--project", os.path.join(repo, "src/AuditSvc.Cli"), "--",
                        "demo-set", "--out", out, "--count", str(count), "--cue-agreement", str(agreement),
                        "--seed", str(seed), "--stamp", stamp, "--belt", belt], check=True)
    return load_set(out)


def load_set(folder):
    with open(os.path.join(folder, "manifest.csv")) as f:
        header = f.readline().strip().split(",")
        rows = [dict(zip(header, line.strip().split(","))) for line in f if line.strip()]
    x = np.stack([np.asarray(Image.open(os.path.join(folder, r["image"])).convert("RGB")) for r in rows])
    y = np.array([CLASSES.index(r["label"]) for r in rows])
    stamp = np.array([r["stamp"] == "yes" for r in rows])
    blue = np.array([r["belt"] == "blue" for r in rows])
    return {"x": x, "y": y, "stamp": stamp, "blue": blue}


def to_tensor(x_uint8):
    # The engine's default recipe, applied outside the exported graph: 0..1 then ImageNet mean/std, NCHW.
    x = torch.from_numpy(x_uint8).float().permute(0, 3, 1, 2) / 255.0
    mean = torch.tensor(MEAN).view(1, 3, 1, 1)
    std = torch.tensor(STD).view(1, 3, 1, 1)
    return (x - mean) / std


def make_net():
    return nn.Sequential(
        nn.Conv2d(3, 16, 3, padding=1), nn.ReLU(), nn.MaxPool2d(2),
        nn.Conv2d(16, 32, 3, padding=1), nn.ReLU(), nn.MaxPool2d(2),
        nn.Conv2d(32, 64, 3, padding=1), nn.ReLU(), nn.MaxPool2d(2),
        nn.Conv2d(64, 64, 3, padding=1), nn.ReLU(),
        nn.AdaptiveAvgPool2d(1), nn.Flatten(), nn.Linear(64, 3))


def train(data, epochs, seed, lr):
    torch.manual_seed(seed)
    net = make_net()
    opt = torch.optim.Adam(net.parameters(), lr=lr)
    loss_fn = nn.CrossEntropyLoss()
    n = len(data["y"])
    gen = torch.Generator().manual_seed(seed)
    for epoch in range(epochs):
        net.train()
        order = torch.randperm(n, generator=gen).numpy()
        total = 0.0
        for start in range(0, n, 64):
            idx = order[start:start + 64]
            xb = to_tensor(data["x"][idx])
            yb = torch.from_numpy(data["y"][idx]).long()
            opt.zero_grad()
            loss = loss_fn(net(xb), yb)
            loss.backward()
            opt.step()
            total += loss.item() * len(idx)
        print(f"  epoch {epoch + 1}: loss {total / n:.4f}", flush=True)
    return net


def predict(net, x):
    net.eval()
    out = []
    with torch.no_grad():
        for start in range(0, len(x), 256):
            out.append(net(to_tensor(x[start:start + 256])).argmax(1).numpy())
    return np.concatenate(out)


def measure(net, test, stamp_on, belt_flip):
    p = predict(net, test["x"])
    y = test["y"]
    ok = p == y
    r = {"accuracy": float(ok.mean())}
    # An image is cue-aligned when it carries the cue exactly when its label is the cue's class.
    aligned = {"stamp": test["stamp"] == (y == 2), "belt": test["blue"] == (y == 1)}
    for name, other in (("stamp", "belt"), ("belt", "stamp")):
        a = aligned[name]
        r[f"{name}_aligned"] = float(ok[a].mean())
        r[f"{name}_conflicting"] = float(ok[~a].mean())
        r[f"{name}_gap"] = r[f"{name}_aligned"] - r[f"{name}_conflicting"]
        # The same split among images aligned on the other cue, so one cue is measured at a time.
        b = aligned[other]
        r[f"{name}_only_aligned"] = float(ok[a & b].mean())
        r[f"{name}_only_conflicting"] = float(ok[~a & b].mean())
        r[f"{name}_only_conflicting_n"] = int((~a & b).sum())
    # Stamp pasted onto non-mouldy images that had none (every other pixel identical).
    target = (y != 2) & ~test["stamp"]
    ps = predict(net, stamp_on["x"][target])
    r["stamp_pasted_accuracy"] = float((ps == y[target]).mean())
    r["stamp_pasted_to_mouldy"] = float((ps == 2).mean())
    r["stamp_pasted_baseline_mouldy"] = float((p[target] == 2).mean())
    # Belt colour swapped on every image; and grey -> blue on non-spotted images.
    pb = predict(net, belt_flip["x"])
    r["belt_swapped_accuracy"] = float((pb == y).mean())
    target = (y != 1) & ~test["blue"]
    r["belt_to_blue_to_spotted"] = float((pb[target] == 1).mean())
    r["belt_to_blue_baseline_spotted"] = float((p[target] == 1).mean())
    return r


def export(net, path, recipe_path):
    net.eval()
    dummy = torch.zeros(1, 3, 64, 64)
    torch.onnx.export(net, dummy, path, input_names=["image"], output_names=["logits"], opset_version=13,
                      dynamic_axes={"image": {0: "batch"}, "logits": {0: "batch"}})
    onnx.checker.check_model(onnx.load(path))
    recipe = {"width": 64, "height": 64, "resize": "stretch", "pixel_scale": 1, "mean": MEAN, "std": STD,
              "channel_order": "rgb", "class_names": CLASSES}
    with open(recipe_path, "w") as f:
        json.dump(recipe, f, indent=2)
        f.write("\n")


def main():
    here = os.path.dirname(os.path.abspath(__file__))
    repo = os.path.dirname(here)
    ap = argparse.ArgumentParser()
    ap.add_argument("--work", default="/tmp/auditsvc-demo-train", help="folder for the generated sets")
    ap.add_argument("--train-count", type=int, default=3000)
    ap.add_argument("--test-count", type=int, default=1500)
    ap.add_argument("--cue-agreement", default="1.0", help="training agreement of the cue model")
    ap.add_argument("--epochs", type=int, default=5)
    ap.add_argument("--lr", type=float, default=2e-3)
    ap.add_argument("--models", default="cue,control", help="which models to train")
    ap.add_argument("--out", default=os.path.join(here, "models"))
    args = ap.parse_args()
    torch.set_num_threads(2)
    subprocess.run(["dotnet", "build", "-v", "q", os.path.join(repo, "src/AuditSvc.Cli")], check=True)

    w = args.work
    sets = {
        "cue": lambda: make_set(repo, f"{w}/train-cue-{args.cue_agreement}-{args.train_count}", args.train_count, args.cue_agreement, 101),
        "control": lambda: make_set(repo, f"{w}/train-control-{args.train_count}", args.train_count, INDEPENDENT, 202),
    }
    test = make_set(repo, f"{w}/test-{args.test_count}", args.test_count, 0.85, 303)
    stamp_on = make_set(repo, f"{w}/test-stamp-on-{args.test_count}", args.test_count, 0.85, 303, stamp="on")
    belt_flip = make_set(repo, f"{w}/test-belt-flip-{args.test_count}", args.test_count, 0.85, 303, belt="flip")

    results = {}
    for name in args.models.split(","):
        print(f"training fruit-{name}", flush=True)
        t0 = time.time()
        net = train(sets[name](), args.epochs, seed=1234, lr=args.lr)
        seconds = time.time() - t0
        r = measure(net, test, stamp_on, belt_flip)
        r["train_seconds"] = round(seconds, 1)
        results[f"fruit-{name}"] = r
        path = os.path.join(args.out, f"fruit-{name}.onnx")
        export(net, path, os.path.join(args.out, f"fruit-{name}.recipe.json"))
        r["onnx_bytes"] = os.path.getsize(path)
        print(json.dumps(r, indent=2), flush=True)

    results["settings"] = dict(vars(args), out=os.path.relpath(args.out, repo))
    results_path = os.path.join(here, "results.json") if len(results) == 3 else os.path.join(w, "results.json")
    with open(results_path, "w") as f:
        json.dump(results, f, indent=2)
        f.write("\n")


if __name__ == "__main__":
    main()
