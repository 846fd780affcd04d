# SPDX-License-Identifier: Apache-2.0
# Checks recofold's normalising flow against PyTorch (Debian python3-torch) and a known density.
#
# 1. Log-determinant: a tiny recofold flow on 8x8 images (both mixings) is
#    rebuilt in PyTorch from its model file (tests/reference/_torch_flow.py, an
#    independent implementation of the published layers); its z must match
#    recofold's, and recofold's log|det dz/dx| must match the brute-force
#    log|det J| of the 64x64 Jacobian computed by torch.autograd.functional.jacobian
#    in float64 (torch.linalg.slogdet).
# 2. Density: a flow fitted by maximum likelihood to samples of a 2-D Gaussian
#    mixture with known density must reach a held-out negative log-likelihood
#    within 0.05 nats of the mixture's true entropy H = -E log p(x), computed by
#    Monte Carlo from the exact mixture density (2e6 samples, standard error
#    printed). The held-out NLL cannot be below H by more than sampling noise
#    (cross-entropy >= entropy, Gibbs' inequality); it must also not exceed it
#    by more than 0.05 nats, i.e. KL(p || q) <= 0.05 nats.
#    Mixture density (standard): p(x) = sum_k w_k N(x; m_k, S_k).
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np
import torch

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _torch_flow import load_recofold_flow  # noqa: E402

BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "learn_flow_tool")

WEIGHTS = np.array([0.5, 0.3, 0.2])
MEANS = np.array([[-1.5, 0.0], [1.5, 0.5], [0.0, 2.2]])
COVS = np.array([[[0.5, 0.25], [0.25, 0.5]],
                 [[0.4, -0.2], [-0.2, 0.6]],
                 [[0.8, 0.0], [0.0, 0.15]]])


def mixture_sample(n, rng):
    k = rng.choice(3, size=n, p=WEIGHTS)
    out = np.empty((n, 2))
    for j in range(3):
        idx = np.nonzero(k == j)[0]
        out[idx] = rng.multivariate_normal(MEANS[j], COVS[j], size=idx.size)
    return out


def mixture_log_density(x):
    terms = []
    for j in range(3):
        d = x - MEANS[j]
        inv = np.linalg.inv(COVS[j])
        q = np.einsum("ni,ij,nj->n", d, inv, d)
        terms.append(np.log(WEIGHTS[j]) - 0.5 * q - 0.5 * np.log(np.linalg.det(2 * np.pi * COVS[j])))
    t = np.stack(terms, 1)
    m = t.max(1, keepdims=True)
    return (m + np.log(np.exp(t - m).sum(1, keepdims=True)))[:, 0]


def check_log_determinant(tmp, failures):
    subprocess.run([TOOL, "jacobian", tmp], check=True)
    for mixing in ("invconv", "reverse"):
        net, arch = load_recofold_flow(os.path.join(tmp, f"flow_{mixing}.h5"))
        with h5py.File(os.path.join(tmp, f"data_{mixing}.h5"), "r") as f:
            x = torch.from_numpy(f["x"][()]).double()
            z_ours = torch.from_numpy(f["z"][()]).double()
            logdet_ours = float(f["logdet"][0])
        z_ref, logdet_ref = net(x)
        z_err = float((z_ref - z_ours).abs().max() / z_ref.abs().max())
        jac = torch.autograd.functional.jacobian(lambda v: net(v.reshape(1, 1, 8, 8))[0].reshape(-1),
                                                 x.reshape(-1))
        sign, logabs = torch.linalg.slogdet(jac)
        logabs = float(logabs)
        print(f"{mixing}: z max rel diff {z_err:.2e}; logdet recofold {logdet_ours:.6f}, "
              f"PyTorch layers {float(logdet_ref):.6f}, brute-force slogdet(J) {logabs:.6f}")
        if z_err > 1e-5:
            failures.append(f"{mixing}: z differs from the PyTorch flow by {z_err:.2e} (relative)")
        if abs(logdet_ours - logabs) > 1e-4 * max(1.0, abs(logabs)):
            failures.append(f"{mixing}: logdet {logdet_ours} vs brute-force {logabs}")
        # A volume-preserving flow would pass trivially: require a real log-determinant.
        if abs(logabs + 64 * np.log(arch["data_scale"])) < 0.1:
            failures.append(f"{mixing}: the test flow is volume preserving; the check would not bite")


def check_gaussian_mixture(tmp, failures):
    rng = np.random.default_rng(2024)
    train = mixture_sample(30000, rng)
    heldout = mixture_sample(20000, rng)
    for name, data in (("train", train), ("heldout", heldout)):
        with h5py.File(os.path.join(tmp, f"{name}.h5"), "w") as f:
            f["samples"] = data
    out = os.path.join(tmp, "fit.h5")
    subprocess.run([TOOL, "fit", os.path.join(tmp, "train.h5"), os.path.join(tmp, "heldout.h5"), out,
                    "1500", "6", "32"], check=True)
    with h5py.File(out, "r") as f:
        lp = f["log_prob"][()]
    nll_flow = -lp.mean()
    mc = mixture_sample(2_000_000, np.random.default_rng(7))
    lmc = mixture_log_density(mc)
    entropy = -lmc.mean()
    se = lmc.std() / np.sqrt(lmc.size)
    nll_true_heldout = -mixture_log_density(heldout).mean()
    print(f"mixture: true entropy {entropy:.4f} nats (MC s.e. {se:.4f}); held-out NLL under the true density "
          f"{nll_true_heldout:.4f}; under the fitted flow {nll_flow:.4f}; gap {nll_flow - entropy:+.4f}")
    if not np.isfinite(nll_flow) or abs(nll_flow - entropy) > 0.05:
        failures.append(f"held-out NLL {nll_flow:.4f} is not within 0.05 nats of the entropy {entropy:.4f}")


def main():
    torch.set_num_threads(1)
    failures = []
    with tempfile.TemporaryDirectory() as tmp:
        check_log_determinant(tmp, failures)
        check_gaussian_mixture(tmp, failures)
    for f in failures:
        print("FAIL:", f)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
