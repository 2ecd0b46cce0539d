#!/usr/bin/python3
"""Random-weight ONNX test fixtures: one small image classifier per architecture family the intake must take.

Run with Debian's python3-torch, python3-torchvision and python3-onnx:

    /usr/bin/python3 tests/models/make_models.py

Every model is built from scratch with reduced widths and random weights (seeded); none is trained and none
is downloaded. Input 64x64 RGB, 3 classes, unless the name says otherwise. Each file stays well under 1 MB.
"""
import os
import torch
import torch.nn as nn
import torch.nn.functional as F

OUT = os.path.dirname(os.path.abspath(__file__))


def cbr(cin, cout, k=3, s=1, groups=1, act=nn.ReLU):
    return nn.Sequential(nn.Conv2d(cin, cout, k, s, k // 2, groups=groups, bias=False), nn.BatchNorm2d(cout), act())


class Head(nn.Module):
    def __init__(self, c, classes):
        super().__init__()
        self.fc = nn.Linear(c, classes)

    def forward(self, x):
        return self.fc(torch.flatten(F.adaptive_avg_pool2d(x, 1), 1))


# --- ResNet-style: residual additions with a projection shortcut -------------------------------------
class Basic(nn.Module):
    def __init__(self, cin, cout, s):
        super().__init__()
        self.a = cbr(cin, cout, 3, s)
        self.b = nn.Sequential(nn.Conv2d(cout, cout, 3, 1, 1, bias=False), nn.BatchNorm2d(cout))
        self.short = nn.Identity() if s == 1 and cin == cout else nn.Sequential(nn.Conv2d(cin, cout, 1, s, bias=False), nn.BatchNorm2d(cout))

    def forward(self, x):
        return F.relu(self.b(self.a(x)) + self.short(x))


class ResNet(nn.Module):
    def __init__(self, classes=3):
        super().__init__()
        self.stem = nn.Sequential(cbr(3, 16, 3, 2), nn.MaxPool2d(3, 2, 1))
        self.layers = nn.Sequential(Basic(16, 16, 1), Basic(16, 32, 2), Basic(32, 48, 2))
        self.head = Head(48, classes)

    def forward(self, x):
        return self.head(self.layers(self.stem(x)))


# --- DenseNet-style: concatenations --------------------------------------------------------------------
class DenseBlock(nn.Module):
    def __init__(self, cin, growth, n):
        super().__init__()
        self.convs = nn.ModuleList([cbr(cin + i * growth, growth) for i in range(n)])

    def forward(self, x):
        for c in self.convs:
            x = torch.cat([x, c(x)], 1)
        return x


class DenseNet(nn.Module):
    def __init__(self, classes=3):
        super().__init__()
        self.stem = cbr(3, 16, 3, 2)
        self.b1 = DenseBlock(16, 8, 3)
        self.t1 = nn.Sequential(cbr(40, 24, 1), nn.AvgPool2d(2))
        self.b2 = DenseBlock(24, 8, 3)
        self.head = Head(48, classes)

    def forward(self, x):
        return self.head(self.b2(self.t1(self.b1(self.stem(x)))))


# --- MobileNet-v3 / EfficientNet-style: depthwise, Hardswish/SiLU, squeeze-excitation ------------------
class SE(nn.Module):
    def __init__(self, c, r=4, gate=nn.Hardsigmoid, act=nn.ReLU):
        super().__init__()
        self.fc1, self.fc2, self.act, self.gate = nn.Conv2d(c, max(4, c // r), 1), nn.Conv2d(max(4, c // r), c, 1), act(), gate()

    def forward(self, x):
        return x * self.gate(self.fc2(self.act(self.fc1(F.adaptive_avg_pool2d(x, 1)))))


class InvRes(nn.Module):
    def __init__(self, cin, cexp, cout, k, s, act, se_gate, se_act):
        super().__init__()
        self.use_res = s == 1 and cin == cout
        self.body = nn.Sequential(cbr(cin, cexp, 1, act=act), cbr(cexp, cexp, k, s, groups=cexp, act=act),
                                  SE(cexp, gate=se_gate, act=se_act),
                                  nn.Conv2d(cexp, cout, 1, bias=False), nn.BatchNorm2d(cout))

    def forward(self, x):
        y = self.body(x)
        return x + y if self.use_res else y


class MobileNetV3(nn.Module):
    """Hardswish, ReLU, hard-sigmoid SE; optionally normalises 0..1 pixels inside the graph."""

    def __init__(self, classes=3, normalise=False):
        super().__init__()
        self.normalise = normalise
        self.register_buffer("mean", torch.tensor([0.485, 0.456, 0.406]).view(1, 3, 1, 1))
        self.register_buffer("std", torch.tensor([0.229, 0.224, 0.225]).view(1, 3, 1, 1))
        hs = nn.Hardswish
        self.stem = cbr(3, 16, 3, 2, act=hs)
        self.blocks = nn.Sequential(
            InvRes(16, 16, 16, 3, 2, nn.ReLU, nn.Hardsigmoid, nn.ReLU),
            InvRes(16, 48, 24, 3, 2, nn.ReLU, nn.Hardsigmoid, nn.ReLU),
            InvRes(24, 64, 24, 5, 1, hs, nn.Hardsigmoid, nn.ReLU),
            InvRes(24, 96, 40, 5, 2, hs, nn.Hardsigmoid, nn.ReLU))
        self.last = cbr(40, 96, 1, act=hs)
        self.head = nn.Sequential(nn.Linear(96, 64), hs(), nn.Dropout(0.2), nn.Linear(64, classes))

    def forward(self, x):
        if self.normalise:
            x = (x - self.mean) / self.std
        x = self.last(self.blocks(self.stem(x)))
        return self.head(torch.flatten(F.adaptive_avg_pool2d(x, 1), 1))


class EfficientNet(nn.Module):
    """MBConv blocks with SiLU and sigmoid-gated SE."""

    def __init__(self, classes=3):
        super().__init__()
        self.stem = cbr(3, 16, 3, 2, act=nn.SiLU)
        self.blocks = nn.Sequential(
            InvRes(16, 64, 24, 3, 2, nn.SiLU, nn.Sigmoid, nn.SiLU),
            InvRes(24, 96, 24, 3, 1, nn.SiLU, nn.Sigmoid, nn.SiLU),
            InvRes(24, 96, 40, 5, 2, nn.SiLU, nn.Sigmoid, nn.SiLU))
        self.last = cbr(40, 80, 1, act=nn.SiLU)
        self.head = Head(80, classes)

    def forward(self, x):
        return self.head(self.last(self.blocks(self.stem(x))))


# --- Inception-style multi-branch block ------------------------------------------------------------------
class InceptionBlock(nn.Module):
    def __init__(self, cin):
        super().__init__()
        self.b1 = cbr(cin, 16, 1)
        self.b3 = nn.Sequential(cbr(cin, 12, 1), cbr(12, 16, 3))
        self.b5 = nn.Sequential(cbr(cin, 8, 1), cbr(8, 8, 5))
        self.bp = nn.Sequential(nn.MaxPool2d(3, 1, 1), cbr(cin, 8, 1))

    def forward(self, x):
        return torch.cat([self.b1(x), self.b3(x), self.b5(x), self.bp(x)], 1)


class Inception(nn.Module):
    def __init__(self, classes=3):
        super().__init__()
        self.stem = nn.Sequential(cbr(3, 24, 3, 2), nn.MaxPool2d(3, 2, 1))
        self.i1 = InceptionBlock(24)
        self.pool = nn.MaxPool2d(3, 2, 1)
        self.i2 = InceptionBlock(48)
        self.head = Head(48, classes)

    def forward(self, x):
        return self.head(self.i2(self.pool(self.i1(self.stem(x)))))


# --- VGG-style plain stack -------------------------------------------------------------------------------
class Vgg(nn.Module):
    def __init__(self, classes=3):
        super().__init__()
        self.features = nn.Sequential(cbr(3, 16), cbr(16, 16), nn.MaxPool2d(2), cbr(16, 32), cbr(32, 32), nn.MaxPool2d(2),
                                      cbr(32, 48), nn.MaxPool2d(2))
        self.classifier = nn.Sequential(nn.Flatten(), nn.Linear(48 * 8 * 8, 32), nn.ReLU(), nn.Linear(32, classes))

    def forward(self, x):
        return self.classifier(self.features(x))


# --- ConvNeXt-style: depthwise 7x7, permute to channels-last, LayerNorm, pointwise Linear, GELU ------------
class ConvNeXtBlock(nn.Module):
    def __init__(self, c):
        super().__init__()
        self.dw = nn.Conv2d(c, c, 7, padding=3, groups=c)
        self.norm = nn.LayerNorm(c)
        self.pw1, self.act, self.pw2 = nn.Linear(c, 4 * c), nn.GELU(), nn.Linear(4 * c, c)
        self.gamma = nn.Parameter(torch.full((c,), 0.5))

    def forward(self, x):
        y = self.dw(x).permute(0, 2, 3, 1)
        y = self.gamma * self.pw2(self.act(self.pw1(self.norm(y))))
        return x + y.permute(0, 3, 1, 2)


class ChannelsFirstNorm(nn.Module):
    def __init__(self, c):
        super().__init__()
        self.norm = nn.LayerNorm(c)

    def forward(self, x):
        return self.norm(x.permute(0, 2, 3, 1)).permute(0, 3, 1, 2)


class ConvNeXt(nn.Module):
    def __init__(self, classes=3):
        super().__init__()
        self.stem = nn.Sequential(nn.Conv2d(3, 24, 4, 4), ChannelsFirstNorm(24))
        self.s1 = ConvNeXtBlock(24)
        self.down = nn.Sequential(ChannelsFirstNorm(24), nn.Conv2d(24, 48, 2, 2))
        self.s2 = ConvNeXtBlock(48)
        self.norm = nn.LayerNorm(48)
        self.fc = nn.Linear(48, classes)

    def forward(self, x):
        x = self.s2(self.down(self.s1(self.stem(x))))
        return self.fc(self.norm(x.mean([2, 3])))


# --- Vision Transformer: 8x8 patches, class token, pre-norm encoder blocks ---------------------------------
class Block(nn.Module):
    def __init__(self, d, heads):
        super().__init__()
        self.n1, self.attn = nn.LayerNorm(d), nn.MultiheadAttention(d, heads, batch_first=True)
        self.n2, self.mlp = nn.LayerNorm(d), nn.Sequential(nn.Linear(d, 2 * d), nn.GELU(), nn.Linear(2 * d, d))

    def forward(self, x):
        h = self.n1(x)
        x = x + self.attn(h, h, h, need_weights=False)[0]
        return x + self.mlp(self.n2(x))


class ViT(nn.Module):
    def __init__(self, classes=3, patch=8, d=32, depth=3, heads=4, size=64):
        super().__init__()
        self.embed = nn.Conv2d(3, d, patch, patch)
        self.cls = nn.Parameter(torch.randn(1, 1, d) * 0.02)
        self.pos = nn.Parameter(torch.randn(1, 1 + (size // patch) ** 2, d) * 0.02)
        self.blocks = nn.Sequential(*[Block(d, heads) for _ in range(depth)])
        self.norm, self.fc = nn.LayerNorm(d), nn.Linear(d, classes)

    def forward(self, x):
        x = self.embed(x).flatten(2).transpose(1, 2)
        x = torch.cat([self.cls.expand(x.shape[0], -1, -1), x], 1) + self.pos
        x = self.blocks(x)
        return self.fc(self.norm(x)[:, 0])


# --- Channels-last input [N,H,W,3] as other frameworks export it --------------------------------------------
class ChannelsLastInput(nn.Module):
    def __init__(self, classes=3):
        super().__init__()
        self.net = ResNet(classes)

    def forward(self, x):
        return self.net(x.permute(0, 3, 1, 2))


# --- Binary classifier with one sigmoid output ------------------------------------------------------------------
class Binary(nn.Module):
    def __init__(self):
        super().__init__()
        self.net = ResNet(1)

    def forward(self, x):
        return torch.sigmoid(self.net(x))


# --- Many units, little work: the scale run's model (bench/scale_run.sh) ---------------------------------------
class WideUnits(nn.Module):
    """5,000 units read by default (1,000 at each of 16x16, 8x8, 4x4 and 2x2, and the pooled 1,000-vector) for about
    13 M multiply-adds per image: a stride-4 patch stem, then grouped 1x1 convolutions between 2x2 max-pools. It is
    wide where the audit's cost lies (units, images) and thin where inference's lies (multiply-adds)."""

    def __init__(self, width=1000, groups=40, classes=3):
        super().__init__()
        self.stem = nn.Sequential(nn.Conv2d(3, 40, 4, 4, bias=False), nn.BatchNorm2d(40), nn.ReLU())
        self.s16 = cbr(40, width, 1)
        self.s8 = nn.Sequential(nn.MaxPool2d(2), cbr(width, width, 1, groups=groups))
        self.s4 = nn.Sequential(nn.MaxPool2d(2), cbr(width, width, 1, groups=groups))
        self.s2 = nn.Sequential(nn.MaxPool2d(2), cbr(width, width, 1, groups=groups))
        self.head = Head(width, classes)

    def forward(self, x):
        return self.head(self.s2(self.s4(self.s8(self.s16(self.stem(x))))))


def export(name, model, shape=(1, 3, 64, 64), dynamic_hw=False, fixed_batch=False, opset=13):
    torch.manual_seed(sum(map(ord, name)))
    model.eval()
    for m in model.modules():  # random but not degenerate BatchNorm statistics
        if isinstance(m, nn.BatchNorm2d):
            m.running_mean.uniform_(-0.1, 0.1)
            m.running_var.uniform_(0.5, 1.5)
    x = torch.rand(*shape)
    axes = {}
    if not fixed_batch:
        axes = {"image": {0: "batch"}, "logits": {0: "batch"}}
    if dynamic_hw:
        axes["image"].update({2: "height", 3: "width"})
    path = os.path.join(OUT, name + ".onnx")
    torch.onnx.export(model, x, path, input_names=["image"], output_names=["logits"], dynamic_axes=axes or None,
                      opset_version=opset, do_constant_folding=True)
    print(f"{name}: {os.path.getsize(path) / 1024:.0f} KB")


def main():
    torch.manual_seed(0)
    export("resnet", ResNet())
    export("resnet-dynamic-size", ResNet(), dynamic_hw=True)
    export("densenet", DenseNet())
    export("mobilenetv3-normalised", MobileNetV3(normalise=True), opset=14)
    export("efficientnet", EfficientNet())
    export("inception", Inception())
    export("vgg-fixed-batch", Vgg(), fixed_batch=True)
    export("convnext", ConvNeXt(), opset=17)
    export("vit", ViT())
    export("channels-last-input", ChannelsLastInput(), shape=(1, 64, 64, 3))
    export("binary-sigmoid", Binary())
    export("classes-120", ResNet(120))
    export("wide-5000-units", WideUnits())


if __name__ == "__main__":
    main()
