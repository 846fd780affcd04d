# SPDX-License-Identifier: Apache-2.0
# Checks recofold's centred orthonormal 2-D FFT against numpy (Debian
# python3-numpy): np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(x), norm="ortho"))
# and the same with ifft2 (DEVELOPERS.md "Sources", "Centred orthonormal DFT"), on odd,
# even and mixed sizes, to 1e-5 relative to the largest output value.
import os
import subprocess
import sys
import tempfile

import numpy as np

BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "ops_fft_tool")


def run_tool(mode, arr, tmp):
    ny, nx = arr.shape
    src = os.path.join(tmp, "in.raw")
    dst = os.path.join(tmp, "out.raw")
    arr.astype(np.complex64).tofile(src)
    subprocess.run([TOOL, mode, str(ny), str(nx), src, dst], check=True)
    return np.fromfile(dst, dtype=np.complex64).reshape(ny, nx)


def reference(mode, x):
    f = np.fft.fft2 if mode == "forward" else np.fft.ifft2
    return np.fft.fftshift(f(np.fft.ifftshift(x), norm="ortho"))


def main():
    rng = np.random.default_rng(4)
    failures = []
    worst = 0.0
    with tempfile.TemporaryDirectory() as tmp:
        for ny, nx in [(16, 16), (15, 15), (17, 32), (32, 17), (1, 8), (9, 1), (64, 48), (45, 63), (256, 256)]:
            x = (rng.standard_normal((ny, nx)) + 1j * rng.standard_normal((ny, nx))).astype(np.complex64)
            for mode in ["forward", "inverse"]:
                got = run_tool(mode, x, tmp)
                ref = reference(mode, x.astype(np.complex128))
                err = np.max(np.abs(got - ref)) / np.max(np.abs(ref))
                worst = max(worst, err)
                if not err < 1e-5:
                    failures.append(f"{mode} {ny}x{nx}: relative error {err:.3g}")
    print(f"centred FFT vs numpy: worst relative error {worst:.3g} over 9 sizes x 2 directions")
    if failures:
        print("FAILED:\n  " + "\n  ".join(failures))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
