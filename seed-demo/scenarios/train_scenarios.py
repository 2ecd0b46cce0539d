#!/usr/bin/python3
"""Trains the models of the invented validation scenarios and measures how far each truly relies on its cue.

Every scenario of `scenario-set --list` is trained twice:
  NAME-relies   trained where the cue follows the cue class (agreement 1.0);
  NAME-ignores  trained where the cue is independent of the label (agreement 1/K).
True reliance is measured on counterfactual twins of a held-out set (the same image with the cue forced on and
off, every other pixel unchanged): accuracy on the aligned twins (cue present iff the label is the cue class)
minus accuracy on the conflicting twins.

Run from anywhere after `dotnet build -c Release`:
    /usr/bin/python3 seed-demo/scenarios/train_scenarios.py [--models a-relies,b-ignores] [--scenarios a,b]
Needs Debian's python3-torch, python3-onnx, python3-numpy, python3-pil; CPU only.
"""
import argparse
import json
import os
import time

import numpy as np
import onnx
import torch
import torch.nn as nn

from scenario_common import HERE, MODELS, catalogue, independent, load_set, make_set

MEAN = [0.485, 0.456, 0.406]
STD = [0.229, 0.224, 0.225]
# Seeds: training sets and the held-out set never share one; audit sets (validate.py) use others again.
TRAIN_SEED = {"relies": 1000, "ignores": 2000}
HELD_OUT_SEED = 9000


def to_tensor(x_uint8):
    # The engine's default recipe, applied outside the exported graph: 0..1 then ImageNet mean/std, NCHW, RGB.
    x = torch.from_numpy(x_uint8).float().permute(0, 3, 1, 2) / 255.0
    return (x - torch.tensor(MEAN).view(1, 3, 1, 1)) / torch.tensor(STD).view(1, 3, 1, 1)


def block(cin, cout):
    # Batch norm lets the flaw features start learning while the cue already solves its class (without it the
    # -relies models sat on a plateau with the other classes at chance); the export folds it into the conv.
    return [nn.Conv2d(cin, cout, 3, padding=1), nn.BatchNorm2d(cout), nn.ReLU()]


def make_net(classes):
    return nn.Sequential(
        *block(3, 8), nn.MaxPool2d(2), *block(8, 16), nn.MaxPool2d(2), *block(16, 32), nn.MaxPool2d(2), *block(32, 32),
        nn.AdaptiveAvgPool2d(1), nn.Flatten(), nn.Linear(32, classes))


def train(data, classes, epochs, seed, lr, batch):
    torch.manual_seed(seed)
    net = make_net(classes)
    opt = torch.optim.Adam(net.parameters(), lr=lr)
    loss_fn = nn.CrossEntropyLoss()
    n = len(data["y"])
    gen = torch.Generator().manual_seed(seed)
    for epoch in range(epochs):
        net.train()
        order = torch.randperm(n, generator=gen).numpy()
        total = 0.0
        for start in range(0, n, batch):
            idx = order[start:start + batch]
            opt.zero_grad()
            loss = loss_fn(net(to_tensor(data["x"][idx])), torch.from_numpy(data["y"][idx]).long())
            loss.backward()
            opt.step()
            total += loss.item() * len(idx)
        print(f"    epoch {epoch + 1}: loss {total / n:.4f}", flush=True)
    return net


def predict(net, x):
    net.eval()
    with torch.no_grad():
        return np.concatenate([net(to_tensor(x[s:s + 256])).argmax(1).numpy() for s in range(0, len(x), 256)])


def reliance(net, on, off, cue_class):
    """Accuracy on aligned twins minus accuracy on conflicting twins of the same held-out images."""
    y = on["y"]
    ok_on = predict(net, on["x"]) == y
    ok_off = predict(net, off["x"]) == y
    is_cue_class = y == cue_class
    aligned = np.where(is_cue_class, ok_on, ok_off)
    conflicting = np.where(is_cue_class, ok_off, ok_on)
    return {
        # Both twins of every image: the cue shown half the time whatever the label, i.e. independent of it.
        "accuracy": round(float(np.concatenate([ok_on, ok_off]).mean()), 4),
        "aligned_accuracy": round(float(aligned.mean()), 4),
        "conflicting_accuracy": round(float(conflicting.mean()), 4),
        "reliance": round(float(aligned.mean() - conflicting.mean()), 4),
        "held_out_images": int(len(y)),
    }


def export(net, labels, path):
    net.eval()
    torch.onnx.export(net, torch.zeros(1, 3, 64, 64), path, input_names=["image"], output_names=["logits"],
                      opset_version=13, dynamic_axes={"image": {0: "batch"}, "logits": {0: "batch"}})
    onnx.checker.check_model(onnx.load(path))
    recipe = {"width": 64, "height": 64, "resize": "stretch", "pixel_scale": 1, "mean": MEAN, "std": STD,
              "channel_order": "rgb", "class_names": labels}
    with open(path[:-len(".onnx")] + ".recipe.json", "w") as f:
        json.dump(recipe, f, indent=2)
        f.write("\n")


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--scenarios", default="", help="comma-separated scenario names (default: the whole catalogue)")
    ap.add_argument("--models", default="", help="comma-separated model names, e.g. cast-warm-relies (default: both of each scenario)")
    ap.add_argument("--work", default="/tmp/auditsvc-scenario-train", help="folder for the generated sets (reused)")
    ap.add_argument("--train-count", type=int, default=1500)
    ap.add_argument("--test-count", type=int, default=600)
    ap.add_argument("--epochs", type=int, default=6)
    ap.add_argument("--lr", type=float, default=3e-3)
    ap.add_argument("--batch", type=int, default=64)
    ap.add_argument("--results", default=os.path.join(HERE, "reliance.json"))
    args = ap.parse_args()
    torch.set_num_threads(2)

    scenarios = catalogue()
    wanted = [s for s in args.scenarios.split(",") if s] or list(scenarios)
    models = [m for m in args.models.split(",") if m] or [f"{s}-{kind}" for s in wanted for kind in ("relies", "ignores")]
    results = json.load(open(args.results)) if os.path.exists(args.results) else {}
    os.makedirs(MODELS, exist_ok=True)
    w = args.work
    for model in models:
        name, kind = model.rsplit("-", 1)
        sc = scenarios[name]
        index = list(scenarios).index(name)
        cue_class = sc["labels"].index(sc["cue_class"])
        agreement = "1.0" if kind == "relies" else independent(sc)
        print(f"{model}: {sc['kind']} cue {sc['parameters']} -> {sc['cue_class']}, {sc['classes']} classes, trained at A = {agreement}", flush=True)
        on = load_set(make_set(f"{w}/{name}/held-out-on", sc, args.test_count, independent(sc), HELD_OUT_SEED + index, cue="on"), sc)
        off = load_set(make_set(f"{w}/{name}/held-out-off", sc, args.test_count, independent(sc), HELD_OUT_SEED + index, cue="off"), sc)
        seed = TRAIN_SEED[kind] + index
        data = load_set(make_set(f"{w}/{name}/train-{kind}-{args.train_count}", sc, args.train_count, agreement, seed), sc)
        t0 = time.time()
        net = train(data, sc["classes"], args.epochs, seed=1234, lr=args.lr, batch=args.batch)
        seconds = time.time() - t0
        r = {"scenario": name, "cue_kind": sc["kind"], "cue_class": sc["cue_class"], "classes": sc["classes"],
             "trained_agreement": float(agreement), "train_images": args.train_count, "train_seed": seed,
             "epochs": args.epochs, "lr": args.lr, "batch": args.batch, "train_seconds": round(seconds, 1)}
        r.update(reliance(net, on, off, cue_class))
        path = os.path.join(MODELS, f"{model}.onnx")
        export(net, sc["labels"], path)
        r["onnx_bytes"] = os.path.getsize(path)
        results[model] = r
        print("  " + json.dumps(r), flush=True)
        # Written after every model so a partial run keeps what it measured.
        with open(args.results, "w") as f:
            json.dump(dict(sorted(results.items())), f, indent=2)
            f.write("\n")


if __name__ == "__main__":
    main()
