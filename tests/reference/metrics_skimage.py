#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# recofold's PSNR, SSIM and NRMSE against scikit-image, and HFEN against an
# independent scipy reimplementation, on image pairs incl. complex and non-square.
#
# Sources of the checks:
#   PSNR  skimage.metrics.peak_signal_noise_ratio(ref, img, data_range=L)
#   SSIM  skimage.metrics.structural_similarity(ref, img, data_range=L,
#         gaussian_weights=True, sigma=1.5, use_sample_covariance=False)
#         (Wang et al. 2004, as implemented in scikit-image 0.19 on Debian)
#   NRMSE skimage.metrics.normalized_root_mse(ref, img, normalization="euclidean")
#   HFEN  our own independent reimplementation with scipy.ndimage: LoG via
#         gaussian_laplace (sigma 1.5, truncated to a 15x15 support, mirrored
#         edges) minus its kernel mean times a 15x15 box sum, i.e. the zero-sum
#         15x15 LoG of Ravishankar & Bresler (2011) as recofold defines it
#         (include/recofold/metrics/image_quality.h).
# Agreement required: 1e-4 relative.
import json
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np
import scipy.ndimage as ndi
from skimage.metrics import normalized_root_mse, peak_signal_noise_ratio, structural_similarity

BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "metrics_score_tool")
REL_TOL = 1e-4

failures = []


def write_image(path, a):
    with h5py.File(path, "w") as f:
        f["image"] = a  # float32, or complex64 (h5py's {r,i} compound)


def hfen_reference(ref, img):
    sigma = 1.5
    truncate = 7 / sigma  # radius int(truncate*sigma + 0.5) = 7 -> 15x15
    delta = np.zeros((15, 15))
    delta[7, 7] = 1.0
    kernel_sum = ndi.gaussian_laplace(delta, sigma, mode="constant", truncate=truncate).sum()

    # Subtracting the kernel mean m = kernel_sum/225 from every tap subtracts m * (15x15 box sum)
    # = kernel_sum * (15x15 box mean) from the response.
    def log_zero_sum(x):
        return ndi.gaussian_laplace(x, sigma, mode="reflect", truncate=truncate) - kernel_sum * ndi.uniform_filter(
            x, 15, mode="reflect")

    return np.linalg.norm(log_zero_sum(img - ref)) / np.linalg.norm(log_zero_sum(ref))


def expected(ref, img, L):
    return {
        "psnr": peak_signal_noise_ratio(ref, img, data_range=L),
        "ssim": structural_similarity(ref, img, data_range=L, gaussian_weights=True, sigma=1.5,
                                      use_sample_covariance=False),
        "nrmse": normalized_root_mse(ref, img, normalization="euclidean"),
        "hfen": hfen_reference(ref, img),
    }


def run_tool(ref_path, img_path, data_range):
    out = subprocess.run([TOOL, ref_path, img_path, repr(data_range)], capture_output=True, text=True)
    if out.returncode != 0:
        raise SystemExit("metrics_score_tool failed: " + out.stderr)
    return json.loads(out.stdout)


def compare(name, got, want):
    for key in ("psnr", "ssim", "nrmse", "hfen"):
        g, w = got[key], want[key]
        rel = abs(g - w) / max(abs(w), 1e-30)
        status = "ok" if rel <= REL_TOL else "FAIL"
        print(f"{name:28s} {key:5s} recofold {g:.10g}  reference {w:.10g}  rel {rel:.2e}  {status}")
        if rel > REL_TOL:
            failures.append(f"{name} {key}")


def phantom(ny, nx, rng):
    y, x = np.mgrid[0:ny, 0:nx]
    cy, cx = (ny - 1) / 2, (nx - 1) / 2
    img = ((((y - cy) / (0.4 * ny)) ** 2 + ((x - cx) / (0.35 * nx)) ** 2) < 1).astype(np.float64)
    img += 0.5 * ((((y - cy * 0.8) / (0.15 * ny)) ** 2 + ((x - cx) / (0.1 * nx)) ** 2) < 1)
    img += 0.05 * rng.standard_normal((ny, nx))
    return img


def main():
    rng = np.random.default_rng(20261201)
    pairs = []
    # 1. square, additive noise
    r = phantom(32, 32, rng)
    pairs.append(("square-noise", r, r + 0.1 * rng.standard_normal(r.shape), True))
    # 2. wide non-square, blurred
    r = phantom(24, 40, rng)
    pairs.append(("wide-blur", r, ndi.gaussian_filter(r, 1.2), False))
    # 3. tall non-square, scaled and shifted, negative values
    r = rng.standard_normal((41, 17))
    pairs.append(("tall-negative", r, 0.8 * r + 0.2 + 0.05 * rng.standard_normal(r.shape), True))
    # 4. smooth texture vs. different seed texture
    yy, xx = np.mgrid[0:29, 0:35]
    r = np.sin(0.4 * xx) * np.cos(0.3 * yy)
    pairs.append(("texture-vs-other", r, np.sin(0.41 * xx + 0.3) * np.cos(0.29 * yy), False))
    # 5. complex, scored by magnitude
    r = phantom(28, 36, rng) * np.exp(1j * 0.3 * rng.standard_normal((28, 36)))
    i = r + 0.08 * (rng.standard_normal(r.shape) + 1j * rng.standard_normal(r.shape))
    pairs.append(("complex-magnitude", r.astype(np.complex64), i.astype(np.complex64), True))
    # 6. complex, non-square, zero-filled-like loss of high frequencies
    r = (phantom(20, 33, rng) + 0.3j * phantom(20, 33, rng)).astype(np.complex64)
    k = np.fft.fft2(r)
    k[:, 8:26] = 0
    pairs.append(("complex-lowpass-nonsquare", r, np.fft.ifft2(k).astype(np.complex64), False))

    with tempfile.TemporaryDirectory() as tmp:
        for name, ref, img, explicit_range in pairs:
            if np.iscomplexobj(ref):
                ref_w, img_w = ref.astype(np.complex64), img.astype(np.complex64)
                ref_m = np.abs(ref_w).astype(np.float64)
                img_m = np.abs(img_w).astype(np.float64)
            else:
                ref_w, img_w = ref.astype(np.float32), img.astype(np.float32)
                ref_m, img_m = ref_w.astype(np.float64), img_w.astype(np.float64)
            rp, ip = os.path.join(tmp, name + "_ref.h5"), os.path.join(tmp, name + "_img.h5")
            write_image(rp, ref_w)
            write_image(ip, img_w)
            L = float(ref_m.max() - ref_m.min())
            if explicit_range:
                L = round(L * 1.1, 3)
            got = run_tool(rp, ip, L if explicit_range else 0.0)
            compare(name, got, expected(ref_m, img_m, L))

        # Region mask: skimage has none, so the reference applies the mask to skimage's
        # full SSIM map (cropped by the window radius 5, as skimage crops before its mean)
        # and to numpy/scipy sums for the other metrics.
        ref = phantom(30, 26, rng)
        img = ref + 0.1 * rng.standard_normal(ref.shape)
        ref_w, img_w = ref.astype(np.float32), img.astype(np.float32)
        ref_m, img_m = ref_w.astype(np.float64), img_w.astype(np.float64)
        yy, xx = np.mgrid[0:30, 0:26]
        roi = (((yy - 14) / 9.0) ** 2 + ((xx - 12) / 8.0) ** 2 < 1).astype(np.float32)
        rp, ip, mp = (os.path.join(tmp, n) for n in ("roi_ref.h5", "roi_img.h5", "roi_mask.h5"))
        write_image(rp, ref_w)
        write_image(ip, img_w)
        write_image(mp, roi)
        L = float(ref_m.max() - ref_m.min())
        out = subprocess.run([TOOL, rp, ip, "0", mp], capture_output=True, text=True)
        if out.returncode != 0:
            raise SystemExit("metrics_score_tool failed: " + out.stderr)
        got = json.loads(out.stdout)
        inside = roi > 0
        mse = np.mean((img_m - ref_m)[inside] ** 2)
        _, smap = structural_similarity(ref_m, img_m, data_range=L, gaussian_weights=True, sigma=1.5,
                                        use_sample_covariance=False, full=True)
        crop = np.zeros_like(inside)
        crop[5:-5, 5:-5] = True
        sigma, truncate = 1.5, 7 / 1.5
        delta = np.zeros((15, 15))
        delta[7, 7] = 1.0
        ksum = ndi.gaussian_laplace(delta, sigma, mode="constant", truncate=truncate).sum()

        def log_zero_sum(x):
            return ndi.gaussian_laplace(x, sigma, mode="reflect", truncate=truncate) - ksum * ndi.uniform_filter(
                x, 15, mode="reflect")

        want = {
            "psnr": 10 * np.log10(L * L / mse),
            "ssim": smap[inside & crop].mean(),
            "nrmse": np.linalg.norm((img_m - ref_m)[inside]) / np.linalg.norm(ref_m[inside]),
            "hfen": np.linalg.norm(log_zero_sum(img_m - ref_m)[inside]) / np.linalg.norm(log_zero_sum(ref_m)[inside]),
        }
        compare("region-mask", got, want)

    if failures:
        print("FAILED:", ", ".join(failures))
        return 1
    print(f"all metrics agree within {REL_TOL:g} relative on {len(pairs)} pairs and one region mask")
    return 0


if __name__ == "__main__":
    sys.exit(main())
