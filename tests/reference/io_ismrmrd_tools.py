#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# recofold's ISMRMRD import and export against Debian's ismrmrd-tools (the
# reference tools of the ISMRM raw data format, Inati et al., MRM 77, 2017):
#  1. ismrmrd_generate_cartesian_shepp_logan writes a multi-coil Cartesian
#     phantom dataset; ismrmrd_recon_cartesian_2d reconstructs it (root sum of
#     squares of the coil images, readout oversampling cropped) into
#     /dataset/cpp. recofold `import` followed by a fully sampled
#     sum-of-squares reconstruction (`recon --method zero-filled --combine sos`)
#     must match that image: correlation >= 0.999 and NRMSE <= 1e-3 after a
#     least-squares scale fit (the tool's FFT is unnormalised, ours
#     orthonormal), without and with readout oversampling (-O) and noise (-n),
#     and with noise-adjust scans (-C) imported without pre-whitening (the
#     tool does not whiten).
#  2. With the noise scans and pre-whitening on, /mri/kspace must equal an
#     independent numpy computation from the raw file (h5py): covariance of
#     the noise samples, Cholesky whitening scaled by sqrt(trace/C), readout
#     crop through numpy's FFT.
#  3. `convert meas.h5 out.ismrmrd.h5` is accepted by the tools: ismrmrd_info
#     runs on it (in 1.8 it prints the library's version information only), and
#     ismrmrd_recon_cartesian_2d reads its header and acquisitions and gives
#     the same sum-of-squares image; importing it again gives identical
#     k-space, mask, coil maps and noise level.
import os
import shutil
import subprocess
import sys
import tempfile

import h5py
import numpy as np

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def run(cmd, cwd):
    out = subprocess.run(cmd, capture_output=True, text=True, cwd=cwd)
    if out.returncode != 0:
        print("command failed:", " ".join(cmd), "\n", out.stdout, out.stderr)
    return out


def cplx(a):
    return a["real"] + 1j * a["imag"] if a.dtype.names else a


def tool_image(path):
    with h5py.File(path, "r") as f:
        return np.asarray(f["dataset/cpp/data"][()], dtype=np.float64).reshape(f["dataset/cpp/data"].shape[-2:])


def compare_sos(tmp, name, gen_args, import_args):
    raw = name + ".h5"
    out = run(["ismrmrd_generate_cartesian_shepp_logan", "-o", raw] + gen_args, tmp)
    check(out.returncode == 0, f"{name}: generator runs ({' '.join(gen_args)})")
    shutil.copy(os.path.join(tmp, raw), os.path.join(tmp, name + "_copy.h5"))
    out = run(["ismrmrd_recon_cartesian_2d", name + "_copy.h5"], tmp)
    check(out.returncode == 0, f"{name}: reference recon runs")
    ref = tool_image(os.path.join(tmp, name + "_copy.h5"))
    out = run([EXE, "--quiet", "import", raw, "--out", name + "_meas.h5"] + import_args, tmp)
    check(out.returncode == 0, f"{name}: recofold import exits 0 ({out.stderr.strip()})")
    out = run([EXE, "--quiet", "recon", "--meas", name + "_meas.h5", "--method", "zero-filled",
               "--combine", "sos", "--out", name + "_sos.h5"], tmp)
    check(out.returncode == 0, f"{name}: recofold sum-of-squares recon exits 0")
    with h5py.File(os.path.join(tmp, name + "_sos.h5"), "r") as f:
        img = np.asarray(f["image"][()], dtype=np.float64)
    check(img.shape == ref.shape, f"{name}: image shape {img.shape} equals the tool's {ref.shape}")
    if img.shape != ref.shape:
        return
    scale = float((ref * img).sum() / (img * img).sum())
    corr = float(np.corrcoef(ref.ravel(), img.ravel())[0, 1])
    nrmse = float(np.linalg.norm(ref - scale * img) / np.linalg.norm(ref))
    check(corr >= 0.999, f"{name}: correlation {corr:.7f} >= 0.999")
    check(nrmse <= 1e-3, f"{name}: NRMSE after scale fit {nrmse:.2e} <= 1e-3")


def whitening_reference(tmp):
    # Independent computation of the pre-whitened, oversampling-free k-space.
    raw = "white.h5"
    run(["ismrmrd_generate_cartesian_shepp_logan", "-o", raw, "-m", "64", "-c", "6", "-O", "2", "-n", "0.05", "-C"], tmp)
    out = run([EXE, "--quiet", "import", raw, "--out", "white_meas.h5"], tmp)
    check(out.returncode == 0, "whitening: import with noise scans exits 0")
    with h5py.File(os.path.join(tmp, raw), "r") as f:
        acqs = f["dataset/data"][()]
    noise_bit = 1 << (19 - 1)  # ISMRMRD_ACQ_IS_NOISE_MEASUREMENT (ismrmrd.h)
    noise, lines = [], {}
    for a in acqs:
        h = a["head"]
        c, ns = int(h["active_channels"]), int(h["number_of_samples"])
        d = np.asarray(a["data"], dtype=np.float32).view(np.complex64).reshape(c, ns).astype(np.complex128)
        if int(h["flags"]) & noise_bit:
            noise.append(d)
        else:
            lines[int(h["idx"]["kspace_encode_step_1"])] = d
    n = np.concatenate(noise, axis=1)
    cov = n @ n.conj().T / n.shape[1]
    C = cov.shape[0]
    w = np.linalg.inv(np.linalg.cholesky(cov)) * np.sqrt(np.trace(cov).real / C)
    ny = max(lines) + 1
    ex = lines[0].shape[1]
    k = np.zeros((C, ny, ex), complex)
    for e1, d in lines.items():
        k[:, e1, :] = w @ d
    keep = ex // 2
    img = np.fft.fftshift(np.fft.ifft(np.fft.ifftshift(k, axes=2), axis=2, norm="ortho"), axes=2)
    img = img[:, :, ex // 2 - keep // 2: ex // 2 - keep // 2 + keep]
    want = np.fft.fftshift(np.fft.fft(np.fft.ifftshift(img, axes=2), axis=2, norm="ortho"), axes=2)
    with h5py.File(os.path.join(tmp, "white_meas.h5"), "r") as f:
        got = cplx(f["mri/kspace"][()])
        sigma = float(f["mri"].attrs["noise_sigma"])
        source = f["mri"].attrs["noise_sigma_source"]
    err = np.linalg.norm(got - want) / np.linalg.norm(want)
    check(got.shape == want.shape, f"whitening: k-space shape {got.shape} == numpy {want.shape}")
    check(err < 1e-5, f"whitening: pre-whitened k-space equals numpy's (relative error {err:.1e})")
    want_sigma = np.sqrt(np.trace(cov).real / C / 2)
    check(abs(sigma - want_sigma) < 1e-6 * want_sigma, f"whitening: noise sigma {sigma:.6g} == sqrt(trace/C/2) {want_sigma:.6g}")
    check("pre-whitened" in str(source), "whitening: the file says the noise came from the noise scans")


def export_round_trip(tmp):
    out = run([EXE, "--quiet", "convert", "o2_noise_meas.h5", "back.ismrmrd.h5"], tmp)
    check(out.returncode == 0, f"export: convert to .ismrmrd.h5 exits 0 ({out.stderr.strip()})")
    info = run(["ismrmrd_info", "back.ismrmrd.h5"], tmp)
    check(info.returncode == 0, "export: ismrmrd_info runs on the file")
    shutil.copy(os.path.join(tmp, "back.ismrmrd.h5"), os.path.join(tmp, "back_copy.h5"))
    rec = run(["ismrmrd_recon_cartesian_2d", "back_copy.h5"], tmp)
    check(rec.returncode == 0 and "Number of acquisitions      : 64" in rec.stdout,
          "export: ismrmrd_recon_cartesian_2d reads the header and the 64 acquisitions")
    if rec.returncode == 0:
        ref = tool_image(os.path.join(tmp, "back_copy.h5"))
        with h5py.File(os.path.join(tmp, "o2_noise_sos.h5"), "r") as f:
            img = np.asarray(f["image"][()], dtype=np.float64)
        scale = float((ref * img).sum() / (img * img).sum())
        nrmse = float(np.linalg.norm(ref - scale * img) / np.linalg.norm(ref))
        check(nrmse <= 1e-3, f"export: the tool's image of our file matches our sum of squares (NRMSE {nrmse:.1e})")
    out = run([EXE, "--quiet", "import", "back.ismrmrd.h5", "--out", "again.h5"], tmp)
    check(out.returncode == 0, f"export: re-import exits 0 ({out.stderr.strip()})")
    with h5py.File(os.path.join(tmp, "o2_noise_meas.h5"), "r") as a, h5py.File(os.path.join(tmp, "again.h5"), "r") as b:
        for ds in ["mri/kspace", "mri/mask", "mri/coil_maps"]:
            same = a[ds].shape == b[ds].shape and np.array_equal(a[ds][()], b[ds][()])
            check(same, f"export: re-imported {ds} is identical")
        check(a["mri"].attrs["noise_sigma"] == b["mri"].attrs["noise_sigma"], "export: same noise sigma")
        check(b.attrs["research_use_only"] == 1, "export: the re-import carries research_use_only")
    with h5py.File(os.path.join(tmp, "back.ismrmrd.h5"), "r") as f:
        check(int(f.attrs["research_use_only"]) == 1, "export: the raw file carries research_use_only = 1")


def main():
    if not shutil.which("ismrmrd_generate_cartesian_shepp_logan"):
        print("FAIL ismrmrd-tools are not installed (scripts/install-deps.sh installs them)")
        return 1
    tmp = tempfile.mkdtemp(prefix="recofold_ismrmrd_")
    try:
        compare_sos(tmp, "o1_clean", ["-m", "64", "-c", "8", "-O", "1", "-n", "0"], [])
        compare_sos(tmp, "o2_clean", ["-m", "64", "-c", "8", "-O", "2", "-n", "0"], [])
        compare_sos(tmp, "o2_noise", ["-m", "64", "-c", "8", "-O", "2", "-n", "0.05"], [])
        compare_sos(tmp, "o2_noise_scan", ["-m", "64", "-c", "8", "-O", "2", "-n", "0.05", "-C"], ["--no-prewhiten"])
        compare_sos(tmp, "m96_o2", ["-m", "96", "-c", "4", "-O", "2", "-n", "0.02"], ["--maps", "lowres"])
        whitening_reference(tmp)
        export_round_trip(tmp)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    print(f"{len(failures)} failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
