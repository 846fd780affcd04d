#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# DICOM through recofold `convert` against pydicom (Debian's python3-pydicom,
# an independent DICOM reader; its package also ships the test images used
# here, CT_small.dcm and MR_small.dcm):
#  - a DICOM shipped by a Debian package converts with the right values
#    (stored value x RescaleSlope + RescaleIntercept, as pydicom computes it)
#    and the right spacing (PixelSpacing = row, column spacing);
#  - a DICOM written by ITK (recofold convert image.h5 out.dcm) is read by
#    pydicom with the right spacing and values (within half a rescale step)
#    and carries the research-use line; it converts back;
#  - a series folder (three slices made from CT_small with pydicom, stored in
#    shuffled file order) converts to a stack in slice-position order;
#  - a DICOM without pixel data, and a folder with two series, exit 2 naming
#    the problem and leave no output.
import copy
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np
import pydicom
from pydicom.data import get_testdata_file

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "cli"))
import _harness  # noqa: E402  (shared bad-input rule)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
failures = []


def run(args, cwd):
    return subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=cwd)


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def read_h5(path):
    with h5py.File(path, "r") as f:
        img = f["image"]
        return np.asarray(img[()], dtype=np.float64), np.asarray(img.attrs["pixel_spacing_mm"]), dict(img.attrs)


def pydicom_values(ds):
    slope = float(getattr(ds, "RescaleSlope", 1.0))
    intercept = float(getattr(ds, "RescaleIntercept", 0.0))
    return ds.pixel_array.astype(np.float64) * slope + intercept


def shipped(tmp):
    for name in ["CT_small.dcm", "MR_small.dcm"]:
        path = get_testdata_file(name)
        ds = pydicom.dcmread(path)
        out = run(["convert", path, name + ".h5"], tmp)
        check(out.returncode == 0, f"{name}: convert exits 0 ({out.stderr.strip()})")
        if out.returncode != 0:
            continue
        img, spacing, attrs = read_h5(os.path.join(tmp, name + ".h5"))
        want = pydicom_values(ds)
        check(img.shape == want.shape, f"{name}: shape {img.shape} == pydicom {want.shape}")
        check(img.shape == want.shape and np.array_equal(img, want),
              f"{name}: values equal pydicom's stored x slope + intercept (range {want.min():g}..{want.max():g})")
        check(np.allclose(spacing, [float(v) for v in ds.PixelSpacing], rtol=1e-6),
              f"{name}: spacing {spacing} == PixelSpacing {list(ds.PixelSpacing)}")
        check(attrs.get("dicom_modality") == ds.Modality, f"{name}: modality {ds.Modality} recorded")
    # A DICOM image as the object of a simulation (pixels only: --truth discrete).
    ct = get_testdata_file("CT_small.dcm")
    run(["mask", "--pattern", "lines-vd", "--size", "128", "--accel", "2", "--seed", "1", "--out", "m2.h5"], tmp)
    out = run(["simulate", "--phantom", ct, "--modality", "mri", "--mask", "m2.h5", "--coils", "2",
               "--truth", "discrete", "--out", "dcm-meas.h5"], tmp)
    check(out.returncode == 0, f"a DICOM image is a simulation object ({out.stderr.strip()})")
    if out.returncode == 0:
        with h5py.File(os.path.join(tmp, "dcm-meas.h5"), "r") as f:
            truth = np.asarray(f["truth/image"][()], dtype=np.float64)
            check(np.array_equal(truth, pydicom_values(pydicom.dcmread(ct))), "its truth is the rescaled DICOM image")
            check(f["truth"].attrs["kind"] == "discrete", "and is labelled discrete")


def written_by_itk(tmp):
    table = os.path.join(SRC, "phantoms", "shepp-logan-modified.toml")
    out = run(["phantom", "--table", table, "--size", "48", "--out", "ph.h5"], tmp)
    check(out.returncode == 0, "phantom for the DICOM export")
    with h5py.File(os.path.join(tmp, "ph.h5"), "r") as f:
        src = np.asarray(f["image"][()], dtype=np.float64)
        src_spacing = np.asarray(f["image"].attrs["pixel_spacing_mm"])
    out = run(["convert", "ph.h5", "ph.dcm"], tmp)
    check(out.returncode == 0, f"convert to .dcm exits 0 ({out.stderr.strip()})")
    check(out.stderr == "", "convert to .dcm prints nothing on stderr")
    if out.returncode != 0:
        return
    ds = pydicom.dcmread(os.path.join(tmp, "ph.dcm"))
    vals = pydicom_values(ds)
    slope = float(ds.RescaleSlope)
    check(vals.shape == src.shape, f"ITK-written DICOM: shape {vals.shape} == {src.shape}")
    err = np.abs(vals - src).max()
    check(err <= 0.5 * slope * 1.001 + 1e-6, f"ITK-written DICOM: pydicom values within half a rescale step ({err:.2e} <= {0.5 * slope:.2e})")
    # A Secondary Capture image keeps its spacing in Nominal Scanned Pixel Spacing (0018,2010).
    sp = ds.PixelSpacing if "PixelSpacing" in ds else ds.get("NominalScannedPixelSpacing", [0, 0])
    check(np.allclose([float(v) for v in sp], src_spacing, rtol=1e-6),
          f"ITK-written DICOM: spacing {list(sp)} == {src_spacing}")
    check(ds.PhotometricInterpretation == "MONOCHROME2", "ITK-written DICOM: grey (MONOCHROME2)")
    check("research use only" in str(getattr(ds, "ImageComments", "")).lower(), "ITK-written DICOM: research-use line")
    out = run(["convert", "ph.dcm", "back.h5"], tmp)
    check(out.stderr == "", "reading the ITK-written DICOM prints nothing on stderr")
    img, spacing, _ = read_h5(os.path.join(tmp, "back.h5"))
    check(out.returncode == 0 and np.abs(img - src).max() <= 0.5 * slope * 1.001 + 1e-6, "ITK-written DICOM converts back")
    check(np.allclose(spacing, src_spacing), "ITK-written DICOM: spacing comes back")


def series(tmp):
    base = pydicom.dcmread(get_testdata_file("CT_small.dcm"))
    folder = os.path.join(tmp, "series")
    os.mkdir(folder)
    uid = pydicom.uid.generate_uid()
    arr = base.pixel_array
    for k, file_name in zip([2, 0, 1], ["a.dcm", "b.dcm", "c.dcm"]):  # file order differs from position order
        ds = copy.deepcopy(base)
        ds.SeriesInstanceUID = uid
        ds.SOPInstanceUID = pydicom.uid.generate_uid()
        ds.InstanceNumber = k + 1
        pos = [float(v) for v in base.ImagePositionPatient]
        pos[2] += 5.0 * k
        ds.ImagePositionPatient = pos
        ds.PixelData = (arr + 100 * k).astype(arr.dtype).tobytes()
        ds.save_as(os.path.join(folder, file_name))
    out = run(["convert", "series", "series.h5"], tmp)
    check(out.returncode == 0, f"series folder converts ({out.stderr.strip()})")
    if out.returncode == 0:
        img, _, attrs = read_h5(os.path.join(tmp, "series.h5"))
        want = np.stack([arr.astype(np.float64) + 100 * k - 1024 for k in range(3)])
        check(img.shape == want.shape, f"series: stack shape {img.shape} == {want.shape}")
        check(img.shape == want.shape and np.array_equal(img, want), "series: slices in position order with rescaled values")
        check(attrs.get("dicom_files") == 3, "series: three files read")
    # A second series in the same folder.
    ds = copy.deepcopy(base)
    ds.SeriesInstanceUID = pydicom.uid.generate_uid()
    ds.SOPInstanceUID = pydicom.uid.generate_uid()
    ds.save_as(os.path.join(folder, "other.dcm"))
    _harness.bad_input_case("two series", lambda: run(["convert", "series", "two.h5"], tmp),
                            ["series", "2 DICOM series"], tmp, failures, one_line=True)


def no_pixel_data(tmp):
    ds = pydicom.dcmread(get_testdata_file("CT_small.dcm"))
    del ds.PixelData
    ds.save_as(os.path.join(tmp, "nopixels.dcm"))
    _harness.bad_input_case("DICOM without pixel data", lambda: run(["convert", "nopixels.dcm", "np.h5"], tmp),
                            ["nopixels.dcm", "(7FE0,0010)", "no pixel data"], tmp, failures, one_line=True)
    with open(os.path.join(tmp, "fake.dcm"), "w") as f:
        f.write("not a DICOM file\n")
    _harness.bad_input_case("not DICOM", lambda: run(["convert", "fake.dcm", "fake.h5"], tmp),
                            ["fake.dcm"], tmp, failures, one_line=True)


def main():
    with tempfile.TemporaryDirectory(prefix="recofold_dicom_") as tmp:
        shipped(tmp)
        written_by_itk(tmp)
        series(tmp)
        no_pixel_data(tmp)
    print(f"{len(failures)} failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
