#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# The bad-input corpus: every case of tests/cli/bad_input_corpus.txt through
# the real executable (one harness: _harness.run_corpus). Each case must exit
# with the expected code, print ONE line naming the expected words, and leave
# nothing behind. Cases on a full or read-only file system (FULL/, RO/) run on
# small tmpfs mounts when this runs as root (CI does) and are skipped with a
# message otherwise. In a build without the learn module (RECOFOLD_TEST_LEARN=0,
# set by src/cli/CMakeLists.txt) a `train` case passes either as written (the
# output checks come first) or as the refusal: exit 2 naming the missing learn
# module, nothing left.
import collections
import gzip
import os
import shutil
import struct
import subprocess
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
TABLE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "bad_input_corpus.txt")


def run(*args):
    out = subprocess.run([EXE, "--quiet"] + list(args), capture_output=True, text=True)
    if out.returncode != 0:
        raise SystemExit(f"fixture command failed: {args}: {out.stderr}")


def cut(src, dst, keep):
    data = open(src, "rb").read()
    open(dst, "wb").write(data[:int(len(data) * keep)])


def copy_h5(src, dst, edit):
    shutil.copy(src, dst)
    with h5py.File(dst, "r+") as f:
        edit(f)


def replace(f, path, value):
    attrs = dict(f[path].attrs)
    del f[path]
    f[path] = value
    for k, v in attrs.items():
        f[path].attrs[k] = v


def build_fixtures(d):
    j = lambda n: os.path.join(d, n)  # noqa: E731
    good = np.linspace(0, 1, 16 * 16, dtype=np.float32).reshape(16, 16)
    with h5py.File(j("good.h5"), "w") as f:
        f["image"] = good
    with h5py.File(j("stack.h5"), "w") as f:
        f["image"] = np.stack([good, good, good])
    with h5py.File(j("small.h5"), "w") as f:
        f["image"] = good[:8, :12]
    open(j("text.h5"), "w").write("this is a text file, not HDF5\n")
    open(j("empty.h5"), "w").close()
    cut(j("good.h5"), j("trunc.h5"), 0.5)
    with h5py.File(j("noimage.h5"), "w") as f:
        f["pixels"] = good
    with h5py.File(j("rank1.h5"), "w") as f:
        f["image"] = good.ravel()
    with h5py.File(j("nan.h5"), "w") as f:
        b = good.copy()
        b[3, 5] = np.nan
        f["image"] = b
    with h5py.File(j("inf.h5"), "w") as f:
        b = good.copy()
        b[0, 0] = np.inf
        f["image"] = b
    with h5py.File(j("strings.h5"), "w") as f:
        f["image"] = np.array([[b"a", b"b"], [b"c", b"d"]], dtype="S1")
    with h5py.File(j("group.h5"), "w") as f:
        f.create_group("image")
    with h5py.File(j("huge.h5"), "w") as f:
        f.create_dataset("image", shape=(200000, 200000), dtype="f4", chunks=(64, 64))
    with h5py.File(j("lzf.h5"), "w") as f:
        f.create_dataset("image", data=good, compression="lzf")
    with h5py.File(j("extlink.h5"), "w") as f:
        f["image"] = h5py.ExternalLink("gone.h5", "/image")
    with h5py.File(j("softlink.h5"), "w") as f:
        f["image"] = h5py.SoftLink("/nowhere")
    for ext in ("nii", "nii.gz", "mha", "nrrd", "png"):
        run("convert", j("good.h5"), j("good." + ext))
    for ext in ("nii", "mha", "nrrd", "png"):
        cut(j("good." + ext), j("trunc." + ext), 0.6)
    raw = gzip.decompress(open(j("good.nii.gz"), "rb").read())
    open(j("trunc.nii.gz"), "wb").write(gzip.compress(raw[:len(raw) // 2]))
    cut(j("good.nii.gz"), j("cutgz.nii.gz"), 0.7)
    h = bytearray(open(j("good.nii"), "rb").read()[:352])
    struct.pack_into("<8h", h, 40, 2, 30000, 30000, 1, 1, 1, 1, 1)
    open(j("huge.nii"), "wb").write(bytes(h) + b"\0" * 64)
    open(j("garbage.nrrd"), "wb").write(b"NRRD0004\ntype: float\ndimension: 2\nsizes: 4 x\nencoding: raw\n\n1234")
    open(j("text.nii"), "w").write("not an image\n")
    open(j("text.png"), "w").write("not an image\n")
    for n in ("dir.nii", "dir.h5", "dir.toml", "dir.png"):
        os.mkdir(j(n))
    shutil.copy(os.path.join(SRC, "phantoms", "shepp-logan.toml"), j("shepp.toml"))
    # Valid inputs made by the program itself.
    run("phantom", "--table", os.path.join(SRC, "phantoms", "shepp-logan.toml"), "--size", "32", "--out", j("p32.h5"))
    run("mask", "--pattern", "lines-uniform", "--size", "32", "--accel", "2", "--out", j("mask.h5"))
    run("simulate", "--phantom", j("p32.h5"), "--modality", "mri", "--coils", "2", "--mask", j("mask.h5"),
        "--out", j("mri.h5"))
    run("simulate", "--phantom", j("p32.h5"), "--modality", "ct", "--views", "30", "--out", j("ct.h5"))
    # Broken measurements.
    m = j("mri.h5")
    copy_h5(m, j("mri_nomask.h5"), lambda f: replace(f, "/mri/mask", np.zeros_like(f["/mri/mask"][...])))
    copy_h5(m, j("mri_zeromaps.h5"), lambda f: replace(f, "/mri/coil_maps", np.zeros_like(f["/mri/coil_maps"][...])))

    def one_zero_map(f):
        a = f["/mri/coil_maps"][...]
        a[1] = 0
        replace(f, "/mri/coil_maps", a)
    copy_h5(m, j("mri_zeromap1.h5"), one_zero_map)

    def nan_in(path):
        def edit(f):
            a = f[path][...]
            a.flat[7] = np.nan
            replace(f, path, a)
        return edit
    copy_h5(m, j("mri_nanmaps.h5"), nan_in("/mri/coil_maps"))
    copy_h5(m, j("mri_nank.h5"), nan_in("/mri/kspace"))
    copy_h5(j("ct.h5"), j("ct_nan.h5"), nan_in("/ct/sinogram"))
    copy_h5(j("ct.h5"), j("ct_naninf.h5"), lambda f: replace(f, "/ct/angles_rad", np.full(30, np.inf)))

    def mask2(f):
        a = f["/mri/mask"][...]
        a[0, 0] = 2
        replace(f, "/mri/mask", a)
    copy_h5(m, j("mri_mask2.h5"), mask2)
    copy_h5(j("ct.h5"), j("ct_angles.h5"), lambda f: replace(f, "/ct/angles_rad", np.zeros(7)))
    copy_h5(m, j("mri_nomod.h5"), lambda f: f.attrs.__delitem__("modality"))
    copy_h5(m, j("mri_badmod.h5"), lambda f: f.attrs.__setitem__("modality", "pet"))
    copy_h5(m, j("mri_nokspace.h5"), lambda f: f.__delitem__("/mri/kspace"))
    copy_h5(m, j("mri_lzf.h5"), lambda f: (f.__delitem__("/mri/mask"),
                                            f.create_dataset("/mri/mask", data=np.ones((32, 32), np.uint8),
                                                             compression="lzf")))
    copy_h5(m, j("mri_extlink.h5"), lambda f: (f.__delitem__("/mri/kspace"),
                                                f.__setitem__("/mri/kspace", h5py.ExternalLink("gone.h5", "/k"))))
    with h5py.File(j("mask_zero.h5"), "w") as f:
        f["mask"] = np.zeros((32, 32), np.uint8)
    with h5py.File(j("mask_nan.h5"), "w") as f:
        a = np.ones((32, 32), np.float32)
        a[2, 2] = np.nan
        f["mask"] = a
    with h5py.File(j("mask_small.h5"), "w") as f:
        f["mask"] = np.ones((8, 8), np.uint8)
    # TOML inputs.
    open(j("syntax.toml"), "w").write("name = \"x\"\n[[ellipse]\nintensity = 1\n")
    open(j("empty.toml"), "w").write("")
    open(j("unknown.toml"), "w").write("name = \"x\"\nfrobnicate = 3\n[[ellipse]]\nintensity = 1.0\na = 0.5\nb = 0.5\n")
    open(j("negaxis.toml"), "w").write("[[ellipse]]\nintensity = 1.0\na = -0.5\nb = 0.5\n")
    open(j("nanint.toml"), "w").write("[[ellipse]]\nintensity = nan\na = 0.5\nb = 0.5\n")
    open(j("noint.toml"), "w").write("[[ellipse]]\na = 0.5\nb = 0.5\n")
    open(j("strint.toml"), "w").write("[[ellipse]]\nintensity = \"bright\"\na = 0.5\nb = 0.5\n")
    open(j("bin.toml"), "wb").write(bytes(range(256)))
    open(j("maskspec_bad.toml"), "w").write("kind = \"mri-mask\"\npattern = \"zigzag\"\nsize = 32\n")
    open(j("maskspec_unknown.toml"), "w").write("kind = \"mri-mask\"\npattern = \"lines-vd\"\nsize = 32\ncolour = 1\n")
    open(j("viewspec_bad.toml"), "w").write("kind = \"ct-views\"\nviews = -4\n")
    open(j("viewspec_kind.toml"), "w").write("kind = \"mri-mask\"\npattern = \"lines-vd\"\n")
    train = open(os.path.join(SRC, "configs", "train-mri-small.toml")).read()
    open(j("train_nanlr.toml"), "w").write(train.replace("learning_rate = 2e-3", "learning_rate = nan"))
    open(j("train_unknown.toml"), "w").write(train + "\n[extra]\nx = 1\n")
    open(j("train_ok.toml"), "w").write(train)
    os.mkdir(j("ckdir"))
    shutil.copy(j("good.h5"), os.path.join(j("ckdir"), "m.checkpoint.h5"))
    open(j("train_steps.toml"), "w").write(train.replace("steps = 1500", "steps = -3"))
    open(j("study_syntax.toml"), "w").write("name = \"s\"\n[[phantom\n")
    open(j("study_empty.toml"), "w").write("")
    open(j("views.txt"), "w").write("0\n10\nnan\n")
    open(j("views_bad.txt"), "w").write("0\nten\n")


def mount_special(base):
    """FULL: a tmpfs with no space left; RO: a read-only tmpfs. Root only."""
    if os.geteuid() != 0:
        return {}
    full, ro = os.path.join(base, "FULL"), os.path.join(base, "RO")
    os.mkdir(full)
    os.mkdir(ro)
    try:
        subprocess.run(["mount", "-t", "tmpfs", "-o", "size=256k", "tmpfs", full], check=True)
        subprocess.run(["mount", "-t", "tmpfs", "-o", "ro,size=64k", "tmpfs", ro], check=True)
    except (subprocess.CalledProcessError, FileNotFoundError):
        return {}
    # Fill FULL up to a few kB.
    fd = os.open(os.path.join(full, "filler"), os.O_WRONLY | os.O_CREAT)
    try:
        while os.write(fd, b"\0" * 4096) > 0:
            pass
    except OSError:
        pass
    os.close(fd)
    os.truncate(os.path.join(full, "filler"), os.path.getsize(os.path.join(full, "filler")) - 8192)
    return {"FULL": full, "RO": ro}


def run_train_without_learn(cases, fixtures, special):
    """The `train` cases in a build without the learn module; returns the failures."""
    failures = []
    for case in cases:
        name, problems, message = _harness.run_corpus_case(EXE, case, fixtures, special)
        how = "as written"
        if problems:
            refusal = dict(case, exit=2, words=["train", "no learn module"])
            name, problems, message = _harness.run_corpus_case(EXE, refusal, fixtures, special)
            how = "refused: no learn module"
        print(("ok    " if not problems else "FAIL  ") + f"[{case['line']}] {name} ({how}): {message[:200]}")
        for p in problems:
            print(f"        {p}")
            failures.append(f"{name}: {p}")
    return failures


def main():
    cases = _harness.read_corpus(TABLE)
    base = tempfile.mkdtemp(prefix="recofold-corpus-")
    special = {}
    try:
        fixtures = os.path.join(base, "fixtures")
        os.mkdir(fixtures)
        build_fixtures(fixtures)
        special = mount_special(base)
        runnable = []
        skipped = 0
        for c in cases:
            needs = {k for k in ("FULL", "RO") if any(a.startswith(k + "/") for a in c["args"])}
            if needs - set(special):
                skipped += 1
                continue
            runnable.append(c)
        if skipped:
            print(f"skipped {skipped} full-disk/read-only cases: they need root to mount a small tmpfs")
        if os.environ.get("RECOFOLD_TEST_LEARN") == "0":
            train = [c for c in runnable if "train" in c["args"]]
            failures = run_train_without_learn(train, fixtures, special)
            failures += _harness.run_corpus(EXE, [c for c in runnable if c not in train], fixtures, special)
        else:
            failures = _harness.run_corpus(EXE, runnable, fixtures, special)
    finally:
        for k in ("FULL", "RO"):
            if k in special:
                subprocess.run(["umount", special[k]])
        shutil.rmtree(base, ignore_errors=True)
    by_exit = collections.Counter(c["exit"] for c in runnable)
    known = {"phantom", "mask", "simulate", "recon", "train", "score", "study", "demo", "convert", "info"}
    commands = collections.Counter(next((a for a in c["args"] if a in known), "(none)") for c in cases)
    print(f"corpus: {len(cases)} cases ({', '.join(f'exit {k}: {v}' for k, v in sorted(by_exit.items()))} run), "
          f"commands: {dict(sorted(commands.items()))}")
    ok = len(runnable) - len({f.split(':')[0] for f in failures})
    print(f"{ok} passed, {len(runnable) - ok} failed" + (f", {skipped} skipped" if skipped else ""))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
