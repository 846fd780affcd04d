# SPDX-License-Identifier: Apache-2.0
# Joseph projector and FBP against scikit-image's radon / iradon on scikit-image's Shepp-Logan raster.
#
# Source: scikit-image (Debian's python3-skimage, 0.19), skimage.transform.radon
# and iradon with circle=True, and skimage.data.shepp_logan_phantom() (400x400).
#
# Geometry mapping (checked by this test, not assumed): skimage rotates about
# pixel (n//2, n//2) and its sinogram is [detectors, angles] with detector i at
# t = i - n//2 pixels, and at theta = 0 it sums over rows (t = column offset).
# recofold's parallel beam (ct_geometry.h) rotates about the geometric centre
# of the grid, t_j = j - (n-1)/2, theta = 0 integrates along y (t = x). The two
# coincide for an odd size n, so the 400x400 raster is padded with one zero row
# (bottom) and column (right) to 401x401; then angles (degrees) are the same
# numbers, 401 detectors of 1 pixel, and our sinogram is skimage's transposed.
# Filter names are the same except skimage's "ramp" = our "ram-lak".
import os
import subprocess
import sys
import tempfile

import numpy as np
from skimage.data import shepp_logan_phantom
from skimage.metrics import peak_signal_noise_ratio
from skimage.transform import iradon, radon

TOOL = os.path.join(os.environ.get("RECOFOLD_BINARY_DIR", "."), "tests", "recon_ct_tool")
FILTERS = {"ramp": "ram-lak", "shepp-logan": "shepp-logan", "cosine": "cosine", "hamming": "hamming",
           "hann": "hann"}

failures = []


def check(ok, message):
    print(("ok   " if ok else "FAIL ") + message)
    if not ok:
        failures.append(message)


def main():
    n = 401
    image = np.zeros((n, n), np.float32)
    image[:400, :400] = shepp_logan_phantom()
    theta = np.arange(180) * 1.0
    data_range = float(image.max() - image.min())

    with tempfile.TemporaryDirectory() as tmp:
        def path(name):
            return os.path.join(tmp, name)

        np.savetxt(path("angles.txt"), theta, fmt="%.17g")
        np.save(path("image.npy"), image)
        subprocess.run([TOOL, "project", path("image.npy"), path("angles.txt"), str(n), path("ours.npy")],
                       check=True)
        ours = np.load(path("ours.npy"))
        sk = radon(image, theta=theta, circle=True)  # [detectors, angles]
        rel = np.linalg.norm(ours - sk.T) / np.linalg.norm(sk)
        check(rel < 0.03, f"sinogram relative difference to skimage radon {rel:.4%} (< 3%)")
        # The mapping must be the right one: the mirrored angle set must not match.
        rel_mirror = np.linalg.norm(ours - radon(image, theta=-theta, circle=True).T) / np.linalg.norm(sk)
        check(rel_mirror > 0.1, f"mirrored angles differ by {rel_mirror:.1%} (the mapping is not ambiguous)")

        np.save(path("sk.npy"), np.ascontiguousarray(sk.T, dtype=np.float32))
        for sk_name, our_name in FILTERS.items():
            ref = iradon(sk, theta=theta, filter_name=sk_name, circle=True).astype(np.float32)
            p_sk = peak_signal_noise_ratio(image, ref, data_range=data_range)
            # Same sinogram (skimage's) through both FBPs: isolates the FBP.
            subprocess.run([TOOL, "fbp", path("sk.npy"), path("angles.txt"), str(n), str(n), our_name,
                            path("r.npy")], check=True)
            r = np.load(path("r.npy"))
            p_same = peak_signal_noise_ratio(image, r, data_range=data_range)
            check(abs(p_same - p_sk) < 0.5,
                  f"{our_name}: FBP PSNR {p_same:.3f} dB vs skimage iradon {p_sk:.3f} dB (same sinogram, within 0.5)")
            # Our whole chain (Joseph sinogram + our FBP) against skimage's whole chain.
            subprocess.run([TOOL, "fbp", path("ours.npy"), path("angles.txt"), str(n), str(n), our_name,
                            path("r2.npy")], check=True)
            p_chain = peak_signal_noise_ratio(image, np.load(path("r2.npy")), data_range=data_range)
            check(abs(p_chain - p_sk) < 0.5,
                  f"{our_name}: radon+FBP PSNR {p_chain:.3f} dB vs skimage radon+iradon {p_sk:.3f} dB (within 0.5)")

    if failures:
        print(f"{len(failures)} check(s) failed")
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
