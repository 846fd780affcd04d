# SPDX-License-Identifier: Apache-2.0
# A PyTorch implementation of recofold's normalising flow, written from the
# published definitions (not from our C++), used by tests/reference and bench/.
#
# Sources (formulas from memory):
#   Dinh, Sohl-Dickstein & Bengio, "Density estimation using Real NVP", ICLR 2017:
#     affine coupling y2 = x2 * exp(s(x1)) + t(x1), log|det| = sum s; checkerboard
#     and channel masks; squeeze (space to depth) and multi-scale split; s bounded
#     by a scaled tanh.
#   Kingma & Dhariwal, "Glow", NeurIPS 2018: actnorm y = (x + b) * exp(logs)
#     (log|det| = h*w*sum logs), invertible 1x1 convolution in LU form
#     W = P L (U + diag(exp(log_s))) with log|det| = h*w*sum log_s.
# The step sequence and parameter names follow recofold's documented model-file
# schema (include/recofold/learn/flow_architecture.h, flow_model.h), so a
# recofold model file loads into this module.
import math

import torch
import torch.nn as nn
import torch.nn.functional as F


def squeeze2(x):
    b, c, h, w = x.shape
    return x.reshape(b, c, h // 2, 2, w // 2, 2).permute(0, 1, 3, 5, 2, 4).reshape(b, 4 * c, h // 2, w // 2)


class Step(nn.Module):
    def __init__(self, kind, c, h, w, parity, arch):
        super().__init__()
        self.kind, self.c, self.h, self.w = kind, c, h, w
        self.actnorm = arch["actnorm"]
        self.invconv = kind == "channel" and arch["mixing"] == "invconv"
        self.reverse = kind == "channel" and arch["mixing"] == "reverse"
        width = arch["width"]
        if kind == "checker":
            self.c_cond, self.c_t = c, c
            ii, jj = torch.meshgrid(torch.arange(h), torch.arange(w), indexing="ij")
            self.register_buffer("mask", (((ii + jj + parity) % 2) == 0).float().reshape(1, 1, h, w),
                                 persistent=False)
            n_in = c + 1
        else:
            self.c_cond = c // 2
            self.c_t = c - self.c_cond
            n_in = self.c_cond
        if self.actnorm:
            self.an_bias = nn.Parameter(torch.zeros(c))
            self.an_logs = nn.Parameter(torch.zeros(c))
        if self.invconv:
            self.mix_lower = nn.Parameter(torch.zeros(c, c))
            self.mix_upper = nn.Parameter(torch.zeros(c, c))
            self.mix_log_s = nn.Parameter(torch.zeros(c))
        self.nn = nn.Sequential(nn.Conv2d(n_in, width, 3, padding=1), nn.ReLU(),
                                nn.Conv2d(width, width, 1), nn.ReLU(),
                                nn.Conv2d(width, 2 * self.c_t, 3, padding=1))
        nn.init.zeros_(self.nn[4].weight)
        nn.init.zeros_(self.nn[4].bias)
        self.s_scale = nn.Parameter(torch.ones(self.c_t))

    def weight(self):
        c = self.c
        eye = torch.eye(c, dtype=self.mix_lower.dtype)
        lower = torch.tril(self.mix_lower, -1) + eye
        upper = torch.triu(self.mix_upper, 1) + torch.diag(torch.exp(self.mix_log_s))
        p = torch.flip(eye, [1])
        return p @ lower @ upper

    def forward(self, x):
        hw = self.h * self.w
        logdet = torch.zeros(x.shape[0], dtype=x.dtype)
        if self.actnorm:
            x = (x + self.an_bias.view(1, -1, 1, 1)) * torch.exp(self.an_logs).view(1, -1, 1, 1)
            logdet = logdet + hw * self.an_logs.sum()
        if self.invconv:
            x = F.conv2d(x, self.weight().view(self.c, self.c, 1, 1))
            logdet = logdet + hw * self.mix_log_s.sum()
        elif self.reverse:
            x = torch.flip(x, [1])
        if self.kind == "checker":
            m = self.mask.to(x.dtype)
            out = self.nn(torch.cat([x * m, m.expand(x.shape[0], 1, self.h, self.w)], 1))
            s = self.s_scale.view(1, -1, 1, 1) * torch.tanh(out[:, :self.c_t])
            t = out[:, self.c_t:]
            y = x * m + (1 - m) * (x * torch.exp(s) + t)
            logdet = logdet + ((1 - m) * s).sum((1, 2, 3))
            return y, logdet
        x1, x2 = x[:, :self.c_cond], x[:, self.c_cond:]
        out = self.nn(x1)
        s = self.s_scale.view(1, -1, 1, 1) * torch.tanh(out[:, :self.c_t])
        t = out[:, self.c_t:]
        return torch.cat([x1, x2 * torch.exp(s) + t], 1), logdet + s.sum((1, 2, 3))


class Flow(nn.Module):
    """x -> (z, log|det dz/dx|) with the plan of flow_architecture.h."""

    def __init__(self, arch):
        super().__init__()
        self.arch = arch
        c, h, w = arch["channels"], arch["ny"], arch["nx"]
        self.plan = []
        steps = []

        def add(kind):
            for i in range(arch["couplings"]):
                self.plan.append(("step", len(steps)))
                steps.append(Step(kind, c, h, w, i % 2, arch))

        for s in range(arch["scales"]):
            if h * w > 1:
                add("checker")
            if s < arch["scales"] - 1:
                self.plan.append(("squeeze", 0))
                c, h, w = 4 * c, h // 2, w // 2
                add("channel")
                self.plan.append(("split", c // 2))
                c -= c // 2
            elif c >= 2:
                add("channel")
        for i, st in enumerate(steps):
            self.add_module(f"step{i}", st)
        self.steps = steps

    def forward(self, x):
        a = self.arch
        b = x.shape[0]
        d = x[0].numel()
        x = (x - a["data_shift"]) / a["data_scale"]
        logdet = torch.full((b,), -d * math.log(a["data_scale"]), dtype=x.dtype)
        parts = []
        for op, arg in self.plan:
            if op == "step":
                x, ld = self.steps[arg](x)
                logdet = logdet + ld
            elif op == "squeeze":
                x = squeeze2(x)
            else:
                parts.append(x[:, :arg].reshape(b, -1))
                x = x[:, arg:]
        parts.append(x.reshape(b, -1))
        return torch.cat(parts, 1), logdet

    def log_prob(self, x):
        z, logdet = self(x)
        return -0.5 * (z ** 2).sum(1) - 0.5 * z.shape[1] * math.log(2 * math.pi) + logdet


def load_recofold_flow(path, dtype=torch.float64):
    """Builds the flow of a recofold model file (h5py) with its weights."""
    import json

    import h5py
    with h5py.File(path, "r") as f:
        g = f["model"]
        kind = g.attrs["kind"]
        kind = kind.decode() if isinstance(kind, bytes) else kind
        assert kind == "flow", kind
        arch_text = g.attrs["architecture"]
        arch = json.loads(arch_text.decode() if isinstance(arch_text, bytes) else arch_text)
        params = {name: torch.from_numpy(g["parameters"][name][()]) for name in g["parameters"]}
    net = Flow(arch)
    state = net.state_dict()
    missing = set(state) - set(params)
    extra = set(params) - set(state)
    assert not missing and not extra, f"missing {sorted(missing)} extra {sorted(extra)}"
    net.load_state_dict({k: v.reshape(state[k].shape) for k, v in params.items()})
    return net.to(dtype), arch
