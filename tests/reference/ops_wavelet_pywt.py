# SPDX-License-Identifier: Apache-2.0
# Checks recofold's WaveletTransform against PyWavelets (Debian python3-pywt):
# wavedec2/waverec2 with mode="periodization", db1-db4, levels 1-4, even
# (square and non-square) sizes, to 1e-5 relative to the largest coefficient.
import os
import subprocess
import sys
import tempfile

import warnings

import numpy as np
import pywt

# Levels 3-4 on 32-pixel sides trigger PyWavelets' boundary-effect warning; the
# periodised transform is still exact there, so the warning is silenced.
warnings.simplefilter("ignore", UserWarning)

BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "ops_wavelet_tool")


def run_tool(mode, name, levels, arr, tmp):
    ny, nx = arr.shape
    src = os.path.join(tmp, "in.raw")
    dst = os.path.join(tmp, "out.raw")
    arr.astype(np.complex64).tofile(src)
    subprocess.run([TOOL, mode, name, str(levels), str(ny), str(nx), src, dst], check=True)
    return np.fromfile(dst, dtype=np.complex64).reshape(ny, nx)


def main():
    rng = np.random.default_rng(20261201)
    failures = []
    worst = 0.0
    cases = 0
    with tempfile.TemporaryDirectory() as tmp:
        for name in ["db1", "db2", "db3", "db4"]:
            for levels in [1, 2, 3, 4]:
                for ny, nx in [(32, 32), (64, 48), (48, 80)]:
                    x = rng.standard_normal((ny, nx)) + 1j * rng.standard_normal((ny, nx))
                    coeffs = pywt.wavedec2(x, name, mode="periodization", level=levels)
                    ref, slices = pywt.coeffs_to_array(coeffs)
                    ours = run_tool("forward", name, levels, x, tmp)
                    scale = np.abs(ref).max()
                    err = np.abs(ours - ref).max() / scale
                    # Documented tuple order: wavedec2 item 1 (cV, key "ad") sits top-right.
                    top_right = coeffs[1][1]
                    h, w = top_right.shape
                    err = max(err, np.abs(ours[:h, w:2 * w] - top_right).max() / scale)
                    back = pywt.waverec2(pywt.array_to_coeffs(ours.astype(np.complex128), slices,
                                                              output_format="wavedec2"),
                                         name, mode="periodization")
                    ours_inv = run_tool("inverse", name, levels, ours, tmp)
                    err_inv = np.abs(ours_inv - back).max() / np.abs(back).max()
                    worst = max(worst, err, err_inv)
                    cases += 1
                    if err > 1e-5 or err_inv > 1e-5:
                        failures.append(f"{name} L={levels} {ny}x{nx}: forward {err:.2e}, inverse {err_inv:.2e}")
    print(f"{cases} cases, worst relative difference to PyWavelets {pywt.__version__}: {worst:.2e}")
    for f in failures:
        print("FAIL", f)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
