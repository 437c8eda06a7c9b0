"""The training benchmark's native peer: trains the same networks in PyTorch, one thread.

Run by worker/bench/native-peer.ts, never by hand. Reads one JSON request on stdin:

  {"mode": "count" | "time",
   "networks": [{"name", "nodes" (motifs expanded, in topological order), "output",
                 "inputShape", "numClasses", "training": {optimizer, learningRate, batchSize,
                 weightDecay}, "batches"}]}

and writes one JSON line on stdout: per network the parameter counts ("count") or the counts and
the measured speed ("time"). Layers mirror worker/src/training/build-model.ts: the implicit head
(flatten when still spatial, then dense to numClasses, softmax in the loss), TensorFlow's 'same'
padding (the extra row or column of an odd total goes at the bottom/right), batch norm with
epsilon 1e-3 and the L2 kernel penalty on dense and convolution kernels. Data are random: speed
does not depend on the values.

Sequences ([steps, channels] inputs) are kept as (N, C, L) for conv1d and the 1-D pools; LSTM and
GRU are PyTorch's own layers, fed (N, L, C). They differ from the TensorFlow.js layers in two
documented ways that do not change the work per step: PyTorch's carry a second bias vector
(`bias_hh`), left out of the parameter count here, and PyTorch's GRU applies the reset gate after
the recurrent product (TensorFlow.js's before: `resetAfter` false), the same products either way.
"""
import json
import math
import sys
import time

import torch
from torch import nn
import torch.nn.functional as F

ACTIVATIONS = {
    "relu": F.relu,
    "relu6": F.relu6,
    "elu": F.elu,
    "selu": F.selu,
    "tanh": torch.tanh,
    "sigmoid": torch.sigmoid,
    "swish": F.silu,
    "linear": lambda x: x,
}


def same_pads(size, kernel, stride):
    out = -(-size // stride)
    total = max((out - 1) * stride + kernel - size, 0)
    return total // 2, total - total // 2, out


def channels_last(v):
    """NHWC / NLC order, as the library flattens: matters for weight layout, not for speed."""
    return v.permute(0, 2, 3, 1) if v.dim() == 4 else v.transpose(1, 2)


def slot(node_id):
    """A module name for a node id: a repeat's layers are named `r.k.c`, and torch refuses dots."""
    return node_id.replace(".", ":")


class GenomeNet(nn.Module):
    """A genome's layers in NCHW; shapes are tracked as (C, H, W) or (F,)."""

    def __init__(self, nodes, output, input_shape, num_classes):
        super().__init__()
        self.nodes = nodes
        self.output = output
        self.layers = nn.ModuleDict()
        self.pads = {}
        self.kernels = []  # weights the L2 penalty covers
        # images (C, H, W), sequences (C, L), vectors (F,)
        if len(input_shape) == 3:
            shape = {"input": (input_shape[2], input_shape[0], input_shape[1])}
        elif len(input_shape) == 2:
            shape = {"input": (input_shape[1], input_shape[0])}
        else:
            shape = {"input": (input_shape[0],)}
        for n in nodes:
            kind, key, s = n["kind"], n["id"], shape[n["inputs"][0]]
            if kind in ("conv2d", "depthwise-conv2d"):
                c, h, w = s
                k, st = n["kernelSize"], n["strides"]
                out_c = n["filters"] if kind == "conv2d" else c * n["depthMultiplier"]
                if n["padding"] == "same":
                    top, bottom, oh = same_pads(h, k, st)
                    left, right, ow = same_pads(w, k, st)
                else:
                    top = bottom = left = right = 0
                    oh, ow = (h - k) // st + 1, (w - k) // st + 1
                symmetric = top == bottom and left == right
                if not symmetric:  # TensorFlow puts an odd total's extra row/column at the far side
                    self.pads[key] = (left, right, top, bottom)
                padding = (top, left) if symmetric else 0
                layer = nn.Conv2d(c, out_c, k, st, padding=padding, groups=1 if kind == "conv2d" else c)
                self.kernels.append(layer.weight)
                shape[key] = (out_c, oh, ow)
            elif kind == "conv1d":
                c, length = s
                k, st, d = n["kernelSize"], n["strides"], n["dilation"]
                span = (k - 1) * d + 1
                if n["padding"] == "same":
                    left, right, out = same_pads(length, span, st)
                else:
                    left = right = 0
                    out = (length - span) // st + 1
                if left != right:
                    self.pads[key] = (left, right)
                layer = nn.Conv1d(c, n["filters"], k, st, padding=left if left == right else 0, dilation=d)
                self.kernels.append(layer.weight)
                shape[key] = (n["filters"], out)
            elif kind in ("max-pool1d", "avg-pool1d"):
                c, length = s
                p, st = n["poolSize"], n["strides"]
                layer = (nn.MaxPool1d if kind == "max-pool1d" else nn.AvgPool1d)(p, st)
                shape[key] = (c, (length - p) // st + 1)
            elif kind in ("lstm", "gru"):
                c, length = s
                layer = (nn.LSTM if kind == "lstm" else nn.GRU)(c, n["units"], batch_first=True)
                self.kernels.append(layer.weight_ih_l0)
                shape[key] = (n["units"], length) if n["returnSequences"] else (n["units"],)
            elif kind == "dense":
                if len(s) != 1:
                    raise ValueError("native peer: dense on a spatial or sequence input is not mirrored")
                layer = nn.Linear(s[0], n["units"])
                self.kernels.append(layer.weight)
                shape[key] = (n["units"],)
            elif kind in ("max-pool2d", "avg-pool2d"):
                c, h, w = s
                p, st = n["poolSize"], n["strides"]
                layer = (nn.MaxPool2d if kind == "max-pool2d" else nn.AvgPool2d)(p, st)
                shape[key] = (c, (h - p) // st + 1, (w - p) // st + 1)
            elif kind == "batch-norm":
                layer = (nn.BatchNorm2d if len(s) == 3 else nn.BatchNorm1d)(s[0], eps=1e-3, momentum=0.1)  # (N, C) or (N, C, L)
                shape[key] = s
            elif kind == "dropout":
                layer = nn.Dropout(n["rate"])
                shape[key] = s
            elif kind in ("flatten", "global-avg-pool", "global-max-pool"):
                layer = None
                shape[key] = (math.prod(s),) if kind == "flatten" else (s[0],)
            elif kind in ("activation", "add"):
                layer = None
                shape[key] = s
            elif kind == "concat":
                layer = None
                parts = [shape[i] for i in n["inputs"]]
                shape[key] = (sum(p[0] for p in parts),) + tuple(parts[0][1:])
            else:
                raise ValueError(f"native peer: layer kind {kind!r} is not mirrored; add it to worker/bench/native-peer.py")
            if layer is not None:
                self.layers[slot(key)] = layer
        last = shape[output]
        self.flatten_head = len(last) > 1
        features = math.prod(last)
        self.head = nn.Linear(features, num_classes)
        self.kernels.append(self.head.weight)

    def forward(self, x):
        values = {"input": x}
        for n in self.nodes:
            kind, key = n["kind"], n["id"]
            v = values[n["inputs"][0]]
            if key in self.pads:
                v = F.pad(v, self.pads[key])
            if kind in ("lstm", "gru"):
                seq, _ = self.layers[slot(key)](v.transpose(1, 2))
                v = seq.transpose(1, 2) if n["returnSequences"] else seq[:, -1]
            elif slot(key) in self.layers:
                v = self.layers[slot(key)](v)
            if kind == "flatten":
                v = channels_last(v).flatten(1)
            elif kind == "global-avg-pool":
                v = v.mean(dim=tuple(range(2, v.dim())))
            elif kind == "global-max-pool":
                v = v.amax(dim=tuple(range(2, v.dim())))
            elif kind == "add":
                v = sum(values[i] for i in n["inputs"])
            elif kind == "concat":
                v = torch.cat([values[i] for i in n["inputs"]], dim=1)
            if "activation" in n:
                v = ACTIVATIONS[n["activation"]](v)
            values[key] = v
        v = values[self.output]
        if self.flatten_head:
            v = channels_last(v).flatten(1)
        return self.head(v)  # logits; the softmax is in the loss


def counts(net):
    # PyTorch's recurrent layers have a second bias vector the TensorFlow.js layers lack (see above).
    trainable = sum(p.numel() for name, p in net.named_parameters() if not name.endswith("bias_hh_l0"))
    moving = sum(b.numel() for name, b in net.named_buffers() if name.endswith(("running_mean", "running_var")))
    return {"trainable": trainable, "nonTrainable": moving}


def optimizer_for(net, training):
    lr = training["learningRate"]
    name = training["optimizer"]
    if name == "adam":
        return torch.optim.Adam(net.parameters(), lr=lr, eps=1e-7)
    if name == "sgd":
        return torch.optim.SGD(net.parameters(), lr=lr)
    if name == "rmsprop":
        return torch.optim.RMSprop(net.parameters(), lr=lr, alpha=0.9, eps=1e-7)
    raise ValueError(f"native peer: optimizer {name!r} is not mirrored")


def measure(net, spec):
    training = spec["training"]
    batch, batches, shape = training["batchSize"], spec["batches"], spec["inputShape"]
    chw = [shape[2], shape[0], shape[1]] if len(shape) == 3 else [shape[1], shape[0]] if len(shape) == 2 else list(shape)
    x = torch.rand([batch * batches] + chw)
    y = torch.randint(0, spec["numClasses"], (batch * batches,))
    optimizer = optimizer_for(net, training)
    decay = training["weightDecay"]
    net.train()

    def step(i):
        xb, yb = x[i * batch : (i + 1) * batch], y[i * batch : (i + 1) * batch]
        optimizer.zero_grad(set_to_none=True)
        loss = F.cross_entropy(net(xb), yb)
        if decay > 0:
            loss = loss + decay * sum((k * k).sum() for k in net.kernels)
        loss.backward()
        optimizer.step()

    for i in range(min(3, batches)):  # warm-up: oneDNN sets up its primitives on the first steps
        step(i)
    wall0, cpu0 = time.perf_counter(), time.process_time()
    for i in range(batches):
        step(i)
    wall, cpu = time.perf_counter() - wall0, time.process_time() - cpu0
    samples = batch * batches
    return {"samples": samples, "samplesPerSecond": samples / wall, "samplesPerCpuSecond": samples / cpu}


def main():
    request = json.load(sys.stdin)
    torch.set_num_threads(1)
    torch.set_num_interop_threads(1)
    torch.manual_seed(1)
    results = []
    for spec in request["networks"]:
        net = GenomeNet(spec["nodes"], spec["output"], spec["inputShape"], spec["numClasses"])
        result = {"name": spec["name"], "params": counts(net)}
        if request["mode"] == "time":
            result.update(measure(net, spec))
        results.append(result)
    print(json.dumps({"torch": torch.__version__, "threads": torch.get_num_threads(), "results": results}))


if __name__ == "__main__":
    main()
