#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# The study report renders in a real browser: a tiny study writes report.html,
# Debian's headless Chromium takes a screenshot of it, and the screenshot must
# be a real page (not blank: many distinct grey levels, dark text on a light
# background over a large part of the picture). Chromium is installed by
# scripts/install-deps.sh; without it this check fails rather than skips.
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np
from skimage import io as skio

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", ".")

CONFIG = f"""
name = "browser-check"
size = 32
seed = 3
[[phantom]]
table = "{SRC}/phantoms/qc-disk.toml"
[mri]
accel = [2, 4]
noise = 0.01
[[method]]
method = "zero-filled"
[[method]]
name = "admm-tv"
method = "admm"
prior = "tv"
lambda = 0.004
iters = 20
modality = "mri"
"""


def main():
    chromium = shutil.which("chromium")
    if not chromium:
        print("FAIL  chromium is not installed (scripts/install-deps.sh installs it)", file=sys.stderr)
        sys.exit(1)
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "study.toml"), "w") as f:
            f.write(CONFIG)
        r = subprocess.run([EXE, "--quiet", "study", "--config", "study.toml", "--out", "st", "--jobs", "1"],
                           capture_output=True, text=True, cwd=tmp)
        if r.returncode != 0:
            print("FAIL  study:", r.stderr, file=sys.stderr)
            sys.exit(1)
        report = os.path.join(tmp, "st", "report.html")
        shot = os.path.join(tmp, "shot.png")
        profile = os.path.join(tmp, "profile")
        cmd = [chromium, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               "--user-data-dir=" + profile, "--window-size=1200,1600", "--screenshot=" + shot,
               "file://" + report]
        r = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
        if not os.path.exists(shot):
            print("FAIL  chromium wrote no screenshot:", r.stderr[-2000:], file=sys.stderr)
            sys.exit(1)
        img = skio.imread(shot)
        grey = img[..., :3].mean(axis=2) if img.ndim == 3 else img.astype(float)
        levels = len(np.unique(grey.astype(np.uint8)))
        dark = float((grey < 100).mean())
        light = float((grey > 200).mean())
        print(f"screenshot {img.shape}, {levels} grey levels, dark {dark:.3f}, light {light:.3f}")
        ok = levels >= 32 and 0.005 < dark < 0.6 and light > 0.2
        print(("ok    " if ok else "FAIL  ") + "report.html renders as a non-blank page in headless Chromium")
        if not ok:
            sys.exit(1)


if __name__ == "__main__":
    main()
