# SPDX-License-Identifier: Apache-2.0
# Reference checks of the phantom module against scikit-image, scipy and numpy (outside sources).
#
# 1. The higher-contrast Shepp-Logan table rastered at 400x400 against
#    skimage.data.shepp_logan_phantom() (scikit-image's rasterisation of the
#    same variant; Shepp & Logan 1974 for the geometry, Toft 1996 for the
#    intensities): PSNR >= 24 dB, >= 5 dB above the raster flipped upside down
#    (orientation), >= 97% of pixels within 0.02.
# 2. The exact Fourier transform at random k against an independent evaluation
#    of the closed forms in DEVELOPERS.md "Sources" (written from memory) using
#    scipy.special.j1.
# 3. kspace_on_grid against numpy's centred orthonormal FFT of a fine raster
#    (np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(x), norm="ortho"))), even and
#    odd grid sizes, lowest 32x32 frequencies.
# 4. Line integrals of blobs against scipy.integrate.quad along the ray.
import math
import os
import subprocess
import sys
import tempfile
import tomllib

import numpy as np
import scipy.integrate
import scipy.special
import skimage.data
import skimage.metrics

SRC = os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
PROBE = os.path.join(BIN, "tests", "phantom_probe")
failures = []


def check(ok, what):
    print(("ok    " if ok else "FAIL  ") + what)
    if not ok:
        failures.append(what)


def probe(*args):
    subprocess.run([PROBE, *map(str, args)], check=True)


def table(name):
    return os.path.join(SRC, "phantoms", name + ".toml")


def grid_image(mode, name, ny, nx, tmp):
    out = os.path.join(tmp, f"{mode}_{name}_{ny}x{nx}.bin")
    probe(mode, table(name), ny, nx, out)
    return np.fromfile(out, dtype=np.complex64).reshape(ny, nx)


def components(name):
    with open(table(name), "rb") as f:
        doc = tomllib.load(f)
    out = []
    for kind in ("ellipse", "blob"):
        for c in doc.get(kind, []):
            rho = c["intensity"]
            rho = complex(rho[0], rho[1]) if isinstance(rho, list) else complex(rho)
            out.append((kind, rho, c["a"], c["b"], c.get("x0", 0.0), c.get("y0", 0.0), c.get("phi_deg", 0.0)))
    return out


def fourier_reference(comps, kx, ky):
    # DEVELOPERS.md "Sources" "Objects" (from memory): ellipse rho a b J1(2 pi kappa)/kappa,
    # blob 2 pi rho a b exp(-2 pi^2 (a^2 k'x^2 + b^2 k'y^2)), both times exp(-i 2 pi k.c).
    total = np.zeros(kx.shape, dtype=complex)
    for kind, rho, a, b, x0, y0, phi in comps:
        p = math.radians(phi)
        kxp = math.cos(p) * kx + math.sin(p) * ky
        kyp = -math.sin(p) * kx + math.cos(p) * ky
        shift = np.exp(-2j * np.pi * (kx * x0 + ky * y0))
        if kind == "ellipse":
            kappa = np.sqrt((a * kxp) ** 2 + (b * kyp) ** 2)
            safe = np.where(kappa > 0, kappa, 1.0)
            amp = np.where(kappa > 0, a * b * scipy.special.j1(2 * np.pi * safe) / safe, np.pi * a * b)
        else:
            amp = 2 * np.pi * a * b * np.exp(-2 * np.pi**2 * ((a * kxp) ** 2 + (b * kyp) ** 2))
        total += rho * amp * shift
    return total


def main():
    with tempfile.TemporaryDirectory() as tmp:
        # 1. scikit-image's Shepp-Logan raster.
        ref = skimage.data.shepp_logan_phantom().astype(np.float64)
        ours = grid_image("raster", "shepp-logan-modified", 400, 400, tmp).real.astype(np.float64)
        rng_ = ref.max() - ref.min()
        psnr = skimage.metrics.peak_signal_noise_ratio(ref, ours, data_range=rng_)
        psnr_flip = skimage.metrics.peak_signal_noise_ratio(ref, ours[::-1, :], data_range=rng_)
        within = np.mean(np.abs(ours - ref) <= 0.02)
        print(f"      shepp-logan-modified 400x400 vs skimage: PSNR {psnr:.2f} dB, flipped {psnr_flip:.2f} dB, "
              f"{100 * within:.2f}% within 0.02")
        check(psnr >= 24.0, "PSNR against skimage.data.shepp_logan_phantom() >= 24 dB")
        check(psnr >= psnr_flip + 5.0, "PSNR at least 5 dB above the upside-down raster (orientation)")
        check(within >= 0.97, ">= 97% of pixels within 0.02 of skimage's raster")

        # 2. Exact transform at random points against scipy.special.j1.
        rng = np.random.default_rng(3)
        for name in ("shepp-logan-modified", "organ-section", "qc-disk"):
            k = np.concatenate([rng.uniform(-100, 100, (400, 2)), rng.uniform(-2, 2, (100, 2)), np.zeros((1, 2))])
            kin = os.path.join(tmp, "k.bin")
            kout = os.path.join(tmp, "f.bin")
            k.astype("<f8").tofile(kin)
            probe("points", table(name), kin, kout)
            got = np.fromfile(kout, dtype="<c16")
            want = fourier_reference(components(name), k[:, 0], k[:, 1])
            err = np.max(np.abs(got - want)) / np.max(np.abs(want))
            print(f"      {name}: max |F - F_scipy| / max |F| = {err:.2e}")
            check(err < 1e-9, f"exact Fourier transform of {name} matches the scipy.special.j1 evaluation")

        # 3. Grid layout against numpy's centred orthonormal FFT of a fine raster.
        # The raster holds pixel averages: divide the FFT by the pixel box's
        # transform sinc(kx dx) sinc(ky dy) before comparing.
        for ny, nx in ((512, 512), (511, 512)):
            ras = grid_image("raster", "shepp-logan-modified", ny, nx, tmp).astype(np.complex128)
            fft = np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(ras), norm="ortho"))
            exact = grid_image("kspace", "shepp-logan-modified", ny, nx, tmp).astype(np.complex128)
            cy, cx = ny // 2, nx // 2
            sl = (slice(cy - 16, cy + 16), slice(cx - 16, cx + 16))
            kx = (np.arange(nx) - nx // 2) / 2.0
            ky = (np.arange(ny) - ny // 2) / 2.0
            box = np.outer(np.sinc(ky * 2.0 / ny), np.sinc(kx * 2.0 / nx))
            err = np.linalg.norm((fft / box)[sl] - exact[sl]) / np.linalg.norm(exact[sl])
            print(f"      kspace_on_grid {ny}x{nx} vs numpy FFT of the raster, lowest 32x32: relative error {err:.2e}")
            check(err < 1e-2, f"kspace_on_grid follows numpy's centred orthonormal FFT layout ({ny}x{nx})")

        # 4. Blob line integrals against scipy.integrate.quad.
        blobs = [c for c in components("organ-section") if c[0] == "blob"][:20]
        rays = np.column_stack([rng.uniform(0, np.pi, 20), rng.uniform(-0.5, 0.5, 20)])
        worst = 0.0
        for (kind, rho, a, b, x0, y0, phi), (theta, t) in zip(blobs, rays):
            # Aim the ray near the blob: offset its t by the blob centre's projection.
            t = t * 2 * max(a, b) + x0 * math.cos(theta) + y0 * math.sin(theta)
            p = math.radians(phi)

            def f(s):
                x = t * math.cos(theta) - s * math.sin(theta)
                y = t * math.sin(theta) + s * math.cos(theta)
                u = (math.cos(p) * (x - x0) + math.sin(p) * (y - y0)) / a
                v = (-math.sin(p) * (x - x0) + math.cos(p) * (y - y0)) / b
                return rho.real * math.exp(-0.5 * (u * u + v * v))

            centre = -x0 * math.sin(theta) + y0 * math.cos(theta)
            want, _ = scipy.integrate.quad(f, centre - 1.0, centre + 1.0, points=[centre], limit=200,
                                           epsabs=1e-14, epsrel=1e-12)
            single = os.path.join(tmp, "blob.toml")
            with open(single, "w") as fh:
                fh.write(f"[[blob]]\nintensity = {rho.real!r}\na = {a!r}\nb = {b!r}\nx0 = {x0!r}\ny0 = {y0!r}\n"
                         f"phi_deg = {phi!r}\n")
            rin, rout = os.path.join(tmp, "r.bin"), os.path.join(tmp, "p.bin")
            np.array([[theta, t]], dtype="<f8").tofile(rin)
            probe("rays", single, rin, rout)
            got = np.fromfile(rout, dtype="<c16")[0].real
            worst = max(worst, abs(got - want) / max(abs(want), 1e-300))
        print(f"      blob line integrals vs scipy.integrate.quad: worst relative error {worst:.2e}")
        check(worst < 1e-4, "blob line integrals match scipy.integrate.quad (relative < 1e-4)")

    if failures:
        print(f"{len(failures)} check(s) failed", file=sys.stderr)
        sys.exit(1)


if __name__ == "__main__":
    main()
