#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Files written by recofold, read by h5py and nibabel (independent readers from Debian):
# documented dataset names, dtypes, shapes, attributes (research_use_only = 1,
# complex64 via the {r,i} compound) and NIfTI values and spacing.
# Layouts checked: include/recofold/io/image_file.h, measurement_file.h, image_export.h.
# Files are made by tests/tools/io_write_tool (see its header for the fixed extras).
import os
import subprocess
import sys
import tempfile

import h5py
import nibabel as nib
import numpy as np

BIN = os.environ.get("RECOFOLD_BINARY_DIR", ".")
TOOL = os.path.join(BIN, "tests", "io_write_tool")
EXE = os.environ.get("RECOFOLD_EXE", os.path.join(BIN, "recofold"))
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def tool(*args):
    out = subprocess.run([TOOL] + [str(a) for a in args], capture_output=True, text=True)
    if out.returncode != 0:
        raise SystemExit("io_write_tool failed: " + out.stderr)


def check_common(f, name):
    check(int(f.attrs["research_use_only"]) == 1, f"{name}: root research_use_only = 1")
    check(str(f.attrs["producer"]).startswith("recofold "), f"{name}: root producer names recofold")
    p = f["provenance"].attrs
    check(all(k in p for k in ("producer", "command", "created_utc")), f"{name}: /provenance has producer, command, created_utc")


def main():
    rng = np.random.default_rng(7)
    with tempfile.TemporaryDirectory() as tmp:
        # Real image file.
        ny, nx = 12, 20
        real = rng.standard_normal((ny, nx)).astype(np.float32)
        raw = os.path.join(tmp, "real.f32")
        real.tofile(raw)
        path = os.path.join(tmp, "real.h5")
        tool("image", raw, ny, nx, 0, 0.7, 1.3, path)
        with h5py.File(path, "r") as f:
            check_common(f, "image")
            d = f["image"]
            check(d.dtype == np.float32, "image: /image is float32")
            check(d.shape == (ny, nx), "image: /image shape [ny, nx]")
            check(np.array_equal(d[()], real), "image: /image values identical")
            check(np.allclose(d.attrs["pixel_spacing_mm"], [0.7, 1.3]), "image: pixel_spacing_mm = (dy, dx)")
            check(int(d.attrs["research_use_only"]) == 1, "image: /image research_use_only = 1")
            check(d.attrs["description"] == "io_write_tool image", "image: description is a str")
            check(d.attrs["units"] == "a.u." and float(d.attrs["fov_mm"]) == 100.0, "image: extra attrs")
            t = f["phantom/components"]
            check(t.dtype == np.float64 and t.shape == (2, 3), "image: table float64 [rows, columns]")
            check(t.attrs["columns"] == "a,b,c", "image: table columns attr")
            check(f["provenance"].attrs["seed"] == "123", "image: provenance extra entry")

        # Complex image file.
        cplx = (rng.standard_normal((9, 14)) + 1j * rng.standard_normal((9, 14))).astype(np.complex64)
        raw = os.path.join(tmp, "cplx.c64")
        cplx.tofile(raw)
        path = os.path.join(tmp, "cplx.h5")
        tool("image", raw, 9, 14, 1, 1.0, 1.0, path)
        with h5py.File(path, "r") as f:
            d = f["image"]
            check(d.dtype == np.complex64, "complex image: h5py reads /image as complex64")
            check(d.dtype.names is None and f["image"].id.get_type().get_nmembers() == 2,
                  "complex image: stored as a 2-member compound")
            check(np.array_equal(d[()], cplx), "complex image: values identical")

        # MRI measurement file.
        coils, my, mx = 3, 8, 10
        ks = (rng.standard_normal((coils, my, mx)) + 1j * rng.standard_normal((coils, my, mx))).astype(np.complex64)
        raw = os.path.join(tmp, "ks.c64")
        ks.tofile(raw)
        path = os.path.join(tmp, "mri.h5")
        tool("mri", raw, coils, my, mx, path)
        with h5py.File(path, "r") as f:
            check_common(f, "mri")
            check(f.attrs["modality"] == "mri", "mri: modality attr")
            check(f.attrs["image_shape"].dtype == np.int64 and list(f.attrs["image_shape"]) == [my, mx],
                  "mri: image_shape int64 [ny, nx]")
            check(f["mri/kspace"].dtype == np.complex64 and np.array_equal(f["mri/kspace"][()], ks),
                  "mri: /mri/kspace complex64 [coils, ny, nx] identical")
            mask = f["mri/mask"][()]
            want = np.zeros((my, mx), np.uint8)
            want[::2, :] = 1
            check(f["mri/mask"].dtype == np.uint8 and np.array_equal(mask, want), "mri: /mri/mask uint8 [ny, nx]")
            check(f["mri/coil_maps"].dtype == np.complex64 and f["mri/coil_maps"].shape == (coils, my, mx),
                  "mri: /mri/coil_maps complex64 [coils, ny, nx]")
            check(float(f["mri"].attrs["noise_sigma"]) == 0.25, "mri: noise_sigma attr")
            check(f["mri"].attrs["pattern"] == "lines-uniform", "mri: pattern attr")
            check(f["truth/image"].dtype == np.complex64 and f["truth"].attrs["kind"] == "discrete",
                  "mri: /truth/image complex64 with kind")

        # CT measurement file.
        views, dets = 6, 11
        sino = rng.random((views, dets)).astype(np.float32)
        raw = os.path.join(tmp, "sino.f32")
        sino.tofile(raw)
        path = os.path.join(tmp, "ct.h5")
        tool("ct", raw, views, dets, path)
        with h5py.File(path, "r") as f:
            check_common(f, "ct")
            check(f["ct/sinogram"].dtype == np.float32 and np.array_equal(f["ct/sinogram"][()], sino),
                  "ct: /ct/sinogram float32 [views, detectors] identical")
            check(f["ct/angles_rad"].dtype == np.float64 and np.allclose(f["ct/angles_rad"][()],
                                                                          np.pi * np.arange(views) / views),
                  "ct: /ct/angles_rad float64 [views]")
            check(f["ct"].attrs["geometry"] == "parallel" and int(f["ct"].attrs["detector_count"]) == dets,
                  "ct: geometry and detector_count attrs")

        # NIfTI through ITK, read by nibabel: same values and spacing.
        # Axis convention (image_export.h): nibabel array = our [ny, nx] image transposed;
        # zooms = (dx, dy).
        for ext in (".nii.gz", ".nii"):
            raw = os.path.join(tmp, "real.f32")
            path = os.path.join(tmp, "real" + ext)
            tool("image", raw, ny, nx, 0, 0.7, 1.3, path)
            img = nib.load(path)
            data = np.asarray(img.dataobj)
            check(img.header.get_data_dtype() == np.float32, f"nifti{ext}: float32 on disk")
            check(data.shape == (nx, ny), f"nifti{ext}: nibabel shape (nx, ny)")
            check(np.array_equal(data.T, real), f"nifti{ext}: values identical (transposed)")
            check(np.allclose(img.header.get_zooms()[:2], (1.3, 0.7)), f"nifti{ext}: zooms (dx, dy) = (1.3, 0.7)")

        # MetaImage and NRRD headers carry the research-use line (SAFETY.md).
        for ext in (".mha", ".nrrd"):
            raw = os.path.join(tmp, "real.f32")
            path = os.path.join(tmp, "marked" + ext)
            tool("image", raw, ny, nx, 0, 0.7, 1.3, path)
            with open(path, "rb") as fh:
                head = fh.read(4096)
            check(b"For research use only" in head and b"research_use_only" in head,
                  f"{ext}: header carries the research-use line")

        # And through the command line: convert an h5py-written file to NIfTI.
        check(os.path.exists(EXE), "the recofold executable exists at " + EXE)
        if os.path.exists(EXE):
            src = os.path.join(tmp, "from_h5py.h5")
            with h5py.File(src, "w") as f:
                f["image"] = real
                f["image"].attrs["pixel_spacing_mm"] = [0.5, 2.0]
            out = os.path.join(tmp, "from_h5py.nii.gz")
            r = subprocess.run([EXE, "convert", src, out], capture_output=True, text=True)
            check(r.returncode == 0, "convert h5 -> nii.gz exits 0")
            if r.returncode == 0:
                img = nib.load(out)
                check(np.array_equal(np.asarray(img.dataobj).T, real), "convert: nibabel values identical")
                check(np.allclose(img.header.get_zooms()[:2], (2.0, 0.5)), "convert: nibabel zooms (dx, dy)")

    if failures:
        print(f"{len(failures)} check(s) failed")
        return 1
    print("all io checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
