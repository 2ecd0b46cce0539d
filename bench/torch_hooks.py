#!/usr/bin/env python3
"""Eager-mode comparison for `auditsvc bench`: the same network rebuilt in PyTorch, forward hooks on the layers
the pass reads by default, and the same job per image: decode, scale the whole image to the input size,
normalise, run, take every unit's spatial maximum and its position, keep the scores matrix (float16) and each
unit's top-n. Weights are random: only the speed is compared. Prints one JSON object on the last line.

Usage: /usr/bin/python3 bench/torch_hooks.py --arch resnet18|fruit --images DIR [--manifest CSV] --threads T --batch B
With --manifest, the images are the `image` column of that CSV (paths relative to it), in its order; else every
.jpg and .png of DIR.
"""
import argparse
import csv
import json
import math
import os
import sys
import time

import numpy as np
import torch
from PIL import Image
from torch import nn

MEAN = np.array([0.485, 0.456, 0.406], dtype=np.float32)
STD = np.array([0.229, 0.224, 0.225], dtype=np.float32)


class Block(nn.Module):
    """ResNet basic block (two 3x3 convolutions, identity or 1x1 projection shortcut)."""

    def __init__(self, cin, cout, stride):
        super().__init__()
        self.conv1 = nn.Conv2d(cin, cout, 3, stride, 1, bias=False)
        self.bn1 = nn.BatchNorm2d(cout)
        self.conv2 = nn.Conv2d(cout, cout, 3, 1, 1, bias=False)
        self.bn2 = nn.BatchNorm2d(cout)
        self.relu = nn.ReLU(inplace=True)
        self.down = None
        if stride != 1 or cin != cout:
            self.down = nn.Sequential(nn.Conv2d(cin, cout, 1, stride, bias=False), nn.BatchNorm2d(cout))

    def forward(self, x):
        y = self.relu(self.bn1(self.conv1(x)))
        y = self.bn2(self.conv2(y))
        return self.relu(y + (x if self.down is None else self.down(x)))


class ResNet18(nn.Module):
    """ResNet-18 up to global pooling (the featurizer the bench's ONNX file holds)."""

    def __init__(self):
        super().__init__()
        self.conv1 = nn.Conv2d(3, 64, 7, 2, 3, bias=False)
        self.bn1 = nn.BatchNorm2d(64)
        self.relu = nn.ReLU(inplace=False)
        self.pool = nn.MaxPool2d(3, 2, 1)
        self.layer1 = nn.Sequential(Block(64, 64, 1), Block(64, 64, 1))
        self.layer2 = nn.Sequential(Block(64, 128, 2), Block(128, 128, 1))
        self.layer3 = nn.Sequential(Block(128, 256, 2), Block(256, 256, 1))
        self.layer4 = nn.Sequential(Block(256, 512, 2), Block(512, 512, 1))
        self.avg = nn.AdaptiveAvgPool2d(1)

    def forward(self, x):
        x = self.pool(self.relu(self.bn1(self.conv1(x))))
        x = self.layer4(self.layer3(self.layer2(self.layer1(x))))
        return self.avg(x)


def build(arch):
    """Network, input size and the modules whose outputs are read (the pass's default layers)."""
    if arch == "resnet18":
        net = ResNet18()
        return net, 224, [net.relu, net.layer1, net.layer2, net.layer3, net.layer4]
    if arch == "fruit":  # seed-demo/train.py make_net()
        net = nn.Sequential(
            nn.Conv2d(3, 16, 3, padding=1), nn.ReLU(), nn.MaxPool2d(2),
            nn.Conv2d(16, 32, 3, padding=1), nn.ReLU(), nn.MaxPool2d(2),
            nn.Conv2d(32, 64, 3, padding=1), nn.ReLU(), nn.MaxPool2d(2),
            nn.Conv2d(64, 64, 3, padding=1), nn.ReLU(),
            nn.AdaptiveAvgPool2d(1), nn.Flatten(), nn.Linear(64, 3))
        return net, 64, [net[1], net[4], net[7], net[10], net[12]]
    raise SystemExit(f"unknown --arch {arch}")


class Images(torch.utils.data.Dataset):
    def __init__(self, files, size):
        self.files, self.size = files, size

    def __len__(self):
        return len(self.files)

    def __getitem__(self, i):
        with Image.open(self.files[i]) as im:
            im = im.convert("RGB").resize((self.size, self.size), Image.BILINEAR)
        x = (np.asarray(im, dtype=np.float32) / 255.0 - MEAN) / STD
        return torch.from_numpy(x.transpose(2, 0, 1).copy()), i


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--arch", required=True)
    ap.add_argument("--images", required=True)
    ap.add_argument("--threads", type=int, default=os.cpu_count())
    ap.add_argument("--batch", type=int, default=8)
    ap.add_argument("--workers", type=int, default=1,
                    help="DataLoader decode processes (1 measured best on 2 cores: 2 oversubscribe, 0 serialises decode)")
    ap.add_argument("--size", default="", help="photo size, for the record only")
    ap.add_argument("--manifest", default="", help="CSV whose `image` column lists the images (relative to it)")
    a = ap.parse_args()
    torch.set_num_threads(a.threads)
    # Random weights can drive activations into subnormal floats, which CPUs process many times slower; trained
    # weights do not. Flushing them keeps the comparison about the framework, not about the random draw.
    torch.set_flush_denormal(True)
    net, size, modules = build(a.arch)
    net.eval()
    if a.manifest:
        with open(a.manifest, newline="") as f:
            root = os.path.dirname(os.path.abspath(a.manifest))
            files = [os.path.join(root, row["image"]) for row in csv.DictReader(f)]
    else:
        files = sorted(os.path.join(a.images, f) for f in os.listdir(a.images) if f.endswith((".jpg", ".png")))
    n = len(files)
    top_n = min(250, max(20, math.ceil(0.02 * n)))
    state = {"offset": 0, "batch": 0}
    units = []
    scores, peaks, tops = [], [], []

    def hook(index):
        def on_output(_module, _inputs, out):
            flat = out.flatten(2) if out.dim() == 4 else out.unsqueeze(2)
            val, arg = flat.max(dim=2)
            lo, b = state["offset"], val.shape[0]
            scores[index][lo:lo + b] = val.numpy().astype(np.float16)
            peaks[index][lo:lo + b] = arg.numpy().astype(np.int16)
            items = torch.arange(lo, lo + b).unsqueeze(1).expand_as(val)
            # Running top-n per unit: merge the kept scores with this batch's.
            kept_v, kept_i = tops[index]
            all_v, all_i = torch.cat([kept_v, val.t()], 1), torch.cat([kept_i, items.t()], 1)
            k = min(top_n, all_v.shape[1])
            v, pos = all_v.topk(k, dim=1)
            tops[index] = (v, all_i.gather(1, pos))
        return on_output

    with torch.no_grad():
        probe = {}
        handles = [m.register_forward_hook(lambda m_, i_, o, j=j: probe.__setitem__(j, o.shape)) for j, m in enumerate(modules)]
        net(torch.zeros(1, 3, size, size))
        for h in handles:
            h.remove()
        for j in range(len(modules)):
            c = probe[j][1]
            units.append(c)
            scores.append(np.zeros((n, c), np.float16))
            peaks.append(np.zeros((n, c), np.int16))
            tops.append((torch.empty(c, 0), torch.empty(c, 0, dtype=torch.long)))
        for j, m in enumerate(modules):
            m.register_forward_hook(hook(j))
        workers = a.workers
        loader = torch.utils.data.DataLoader(Images(files, size), batch_size=a.batch, num_workers=workers)
        start, probs = time.perf_counter(), []
        for x, idx in loader:
            state["offset"] = int(idx[0])
            probs.append(torch.softmax(net(x).flatten(1), 1).numpy())
        seconds = time.perf_counter() - start
        # Forward alone on pre-decoded batches, no hooks: the framework's own inference speed for comparison.
        for m in modules:
            m._forward_hooks.clear()
        batches = [x for x, _ in torch.utils.data.DataLoader(Images(files[:64], size), batch_size=a.batch)]
        net(batches[0])
        t0 = time.perf_counter()
        for x in batches:
            net(x)
        forward = sum(len(x) for x in batches) / (time.perf_counter() - t0)
    print(json.dumps({"arch": a.arch, "images": n, "threads": a.threads, "workers": workers, "batch": a.batch,
                      "units": sum(units), "top_n": top_n, "seconds": round(seconds, 3),
                      "images_per_second": round(n / seconds, 3), "forward_images_per_second": round(forward, 3), "torch": torch.__version__}))


if __name__ == "__main__":
    sys.exit(main())
