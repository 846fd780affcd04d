# SPDX-License-Identifier: Apache-2.0
# `recofold score --model FLOW --image F`: bits per dimension (-log2 p per pixel)
# under a flow model as a plausibility score. A tiny flow (16x16, 2 scales,
# width 8) trained briefly on the textured family must give its own family's
# held-out objects (other seeds) lower bits/dim than uniform-noise images:
# every family image below every noise image (AUROC = 1 on 6 + 6 images).
# Bad input: a model that is not a flow, an image of another size, no
# --reference and no --model -> exit 2 naming the file or flag.
import json
import os
import subprocess
import sys
import tempfile

import nibabel as nib
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _harness import tiny_flow_training  # noqa: E402

EXE = os.environ["RECOFOLD_EXE"]
SRC = os.environ["RECOFOLD_SOURCE_DIR"]
MODULE = os.path.join(os.path.dirname(EXE), "lib", "librecofold_learn.so")
if not os.path.exists(MODULE):
    print("no learn module in this build: skipped")
    sys.exit(0)

failures = []


def run(args, cwd):
    return subprocess.run([EXE, "-q"] + args, capture_output=True, text=True, cwd=cwd, timeout=600)


def bits(image, cwd, index=0):
    out = run(["score", "--model", "flow.h5", "--image", image, "--index", str(index), "--json"], cwd)
    if out.returncode != 0:
        raise SystemExit(f"score {image}[{index}]: exit {out.returncode}: {out.stderr.strip()}")
    return json.loads(out.stdout)["bits_per_dim"]


with tempfile.TemporaryDirectory() as d:
    cfg = tiny_flow_training(SRC, steps=100)
    open(os.path.join(d, "flow.toml"), "w").write(cfg)
    out = run(["train", "--config", "flow.toml", "--out", "flow.h5"], d)
    if out.returncode != 0:
        raise SystemExit(f"train: exit {out.returncode}: {out.stderr.strip()}")
    # Held-out objects of the training family (training used seed 1; these come from seed 900).
    out = run(["phantom", "--family", "textured", "--count", "6", "--seed", "900", "--size", "16", "--out", "fam.h5"], d)
    assert out.returncode == 0, out.stderr
    rng = np.random.default_rng(7)
    for i in range(6):
        nib.save(nib.Nifti1Image(rng.uniform(0, 1, (16, 16)).astype(np.float32), np.eye(4)),
                 os.path.join(d, f"noise{i}.nii"))
    fam = [bits("fam.h5", d, i) for i in range(6)]
    noise = [bits(f"noise{i}.nii", d) for i in range(6)]
    print("family bits/dim:", " ".join(f"{b:.3f}" for b in fam))
    print("noise  bits/dim:", " ".join(f"{b:.3f}" for b in noise))
    pairs = [(f < n) for f in fam for n in noise]
    auroc = sum(pairs) / len(pairs)
    print(f"AUROC family vs noise: {auroc:.3f}")
    if auroc < 1.0:
        failures.append(f"plausibility does not separate family from noise: AUROC {auroc:.3f}")

    # With a reference, the metrics and bits_per_dim come together.
    out = run(["score", "--reference", "fam.h5", "--image", "fam.h5", "--model", "flow.h5", "--json"], d)
    j = json.loads(out.stdout) if out.returncode == 0 else {}
    if abs(j.get("bits_per_dim", -1) - fam[0]) > 1e-9 or "ssim" not in j:
        failures.append(f"score with reference and model: exit {out.returncode}, {out.stdout.strip()} {out.stderr.strip()}")

    # Bad input.
    out = run(["phantom", "--family", "textured", "--size", "32", "--out", "big.h5"], d)
    for name, args, words in (
        ("not a flow", ["score", "--model", "fam.h5", "--image", "fam.h5"], ["fam.h5", "model"]),
        ("missing model", ["score", "--model", "nothere.h5", "--image", "fam.h5"], ["nothere.h5"]),
        ("wrong size", ["score", "--model", "flow.h5", "--image", "big.h5"], ["big.h5", "image size", "16"]),
        ("nothing to score against", ["score", "--image", "fam.h5"], ["--reference", "--model"]),
    ):
        before = set(os.listdir(d))
        out = run(args, d)
        after = set(os.listdir(d))
        print(f"{name}: exit {out.returncode}: {out.stderr.strip()}")
        if out.returncode != 2 or any(w not in out.stderr for w in words) or after != before:
            failures.append(f"{name}: exit {out.returncode}, {out.stderr.strip()!r}, new files {sorted(after - before)}")

if failures:
    print("FAILURES:\n  " + "\n  ".join(failures))
    sys.exit(1)
print("ok")
