# SPDX-License-Identifier: Apache-2.0
# Exact radial k-space of the head phantom (phantoms/shepp-logan-modified.toml)
# against numpy's evaluation of the published closed form of an ellipse's
# Fourier transform with J1 from scipy (Debian python3-scipy):
#   F(k) = sum rho a b J1(2 pi kappa) / kappa exp(-2 pi i k.c),
#   kappa = |(a k'x, b k'y)|, k' the frequency rotated into the ellipse's frame
# (the standard result, e.g. Kak & Slaney ch. 3 for the projections; written
# from memory), then mapped to recofold's NUFFT convention (ops/nufft.h,
# acquire/exact_kspace.h): k in cycles per field of view, k/2 in cycles per
# unit of the [-1,1] square, times sqrt(ny nx)/4 exp(2 pi i (cx kx/nx - cy ky/ny)),
# cx = 1/2 for even nx. Golden-angle spokes of a 256 grid, 2x readout
# oversampling, plus an odd 255 grid. Requirement: relative error <= 1e-5.
import math
import os
import subprocess
import sys
import tempfile
import tomllib

import numpy as np
import scipy.special

SRC = os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "acquire_exact_tool")
TABLE = os.path.join(SRC, "phantoms", "shepp-logan-modified.toml")


def ellipses():
    with open(TABLE, "rb") as f:
        doc = tomllib.load(f)
    return [(complex(c["intensity"]), c["a"], c["b"], c.get("x0", 0.0), c.get("y0", 0.0), c.get("phi_deg", 0.0))
            for c in doc["ellipse"]]


def closed_form(kx, ky):  # k in cycles per unit of the square
    total = np.zeros(kx.shape, dtype=complex)
    for rho, a, b, x0, y0, phi in ellipses():
        p = math.radians(phi)
        kxp = math.cos(p) * kx + math.sin(p) * ky
        kyp = -math.sin(p) * kx + math.cos(p) * ky
        kappa = np.sqrt((a * kxp) ** 2 + (b * kyp) ** 2)
        safe = np.where(kappa > 0, kappa, 1.0)
        amp = np.where(kappa > 0, a * b * scipy.special.j1(2 * np.pi * safe) / safe, np.pi * a * b)
        total += rho * amp * np.exp(-2j * np.pi * (kx * x0 + ky * y0))
    return total


def main():
    failures = []
    golden = math.pi * (math.sqrt(5) - 1) / 2
    with tempfile.TemporaryDirectory() as tmp:
        for n, spokes in [(256, 64), (255, 21)]:
            readout = 2 * n
            r = (np.arange(readout) - readout // 2) * n / readout
            ang = np.arange(spokes) * golden
            kx = (np.cos(ang)[:, None] * r[None, :]).ravel()
            ky = (np.sin(ang)[:, None] * r[None, :]).ravel()
            pts = os.path.join(tmp, "pts.raw")
            out = os.path.join(tmp, "out.raw")
            np.stack([kx, ky], axis=1).astype(np.float64).tofile(pts)
            subprocess.run([TOOL, TABLE, str(n), str(n), pts, out], check=True)
            got = np.fromfile(out, dtype=np.complex64)
            c = 0.5 if n % 2 == 0 else 0.0
            want = closed_form(kx / 2, ky / 2) * (n / 4) * np.exp(2j * np.pi * c * (kx - ky) / n)
            err = np.linalg.norm(got - want) / np.linalg.norm(want)
            worst = np.max(np.abs(got - want)) / np.max(np.abs(want))
            print(f"{n}x{n}, {spokes} golden-angle spokes x {readout}: relative l2 error {err:.3g}, "
                  f"max error / max value {worst:.3g}")
            if not err <= 1e-5:
                failures.append(f"{n}: relative error {err:.3g} > 1e-5")
    if failures:
        print("FAILED:\n  " + "\n  ".join(failures))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
