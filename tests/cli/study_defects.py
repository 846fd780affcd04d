#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Study defects seen by a new user, each checked end to end:
# - `study --merge A B --out D` into a folder D holding a full run keeps D resumable (reruns exit 0, run only
#   missing cases, keep the study's name); a merge into a folder of another config exits 2 and changes nothing;
# - a resume with nothing to do says so instead of "overhead 100%", and the final progress line is printed once;
# - messages name modalities as "an MRI" / "a CT" measurement (never "a mri", "a ct");
# - study image files carry the command, the pixel spacing of the object's field (200 mm at 64² = 3.125 mm),
#   and the method, prior and lambda of the case.
import csv
import glob
import os
import re
import shutil
import sys
import tempfile

import h5py

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _harness import Checks, recofold, must_succeed  # noqa: E402

EXE = os.path.abspath(os.environ.get("RECOFOLD_EXE", "./recofold"))
SRC = os.path.abspath(os.environ.get("RECOFOLD_SOURCE_DIR", "."))

STUDY = """
size = 64
repetitions = 2
seed = 4
[[phantom]]
table = "{qc}"
[mri]
accel = [2, 3]
noise = 0.01
[[method]]
method = "zero-filled"
[[method]]
name = "ista-tv"
method = "ista"
prior = "tv"
lambda = {lam}
iters = 4
"""


def rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def attr(obj, name):
    v = obj.attrs.get(name)
    return v.decode() if isinstance(v, bytes) else v


def check_merge(check, tmp):
    must_succeed(EXE, ["study", "--config", "s.toml", "--out", "full"], tmp, check)
    for i in (1, 2):
        must_succeed(EXE, ["study", "--config", "s.toml", "--out", f"part{i}", "--shard", f"{i}/2"], tmp, check)
    must_succeed(EXE, ["study", "--merge", "part1", "part2", "--out", "full"], tmp, check)
    out = recofold(EXE, ["study", "--config", "s.toml", "--out", "full"], tmp)
    check(out.returncode == 0, f"rerun after a merge into the full run exits 0 (got {out.returncode}: {out.stderr.strip()})")
    check("0 run, 8 already done" in out.stdout, "the rerun finds every case done: " + out.stdout.splitlines()[0])
    with open(os.path.join(tmp, "full", "manifest.json")) as f:
        check('"name": "s"' in f.read(), "the merged manifest keeps the study's name")
    # Drop one row: the next rerun runs exactly that case.
    path = os.path.join(tmp, "full", "results.csv")
    with open(path) as f:
        lines = f.readlines()
    with open(path, "w") as f:
        f.writelines(lines[:-1])
    out = recofold(EXE, ["study", "--config", "s.toml", "--out", "full"], tmp)
    check(out.returncode == 0 and "1 run, 7 already done" in out.stdout,
          f"a rerun after losing a row runs one case (exit {out.returncode}: {out.stdout.splitlines()[:1]} {out.stderr.strip()})")
    check(len(rows(path)) == 8, "results.csv is whole again")
    # A merge into the folder of another config is refused and leaves it alone.
    must_succeed(EXE, ["study", "--config", "other.toml", "--out", "other"], tmp, check)
    before = open(os.path.join(tmp, "other", "results.csv")).read()
    out = recofold(EXE, ["study", "--merge", "part1", "part2", "--out", "other"], tmp)
    check(out.returncode == 2 and "different config" in out.stderr,
          f"merge into another config's folder exits 2 (got {out.returncode}: {out.stderr.strip()})")
    check(open(os.path.join(tmp, "other", "results.csv")).read() == before, "its results.csv is unchanged")


def check_progress_lines(check, tmp):
    out = recofold(EXE, ["study", "--config", "s.toml", "--out", "fresh"], tmp, quiet=False)
    done = [ln for ln in out.stderr.splitlines() if "done in" in ln]
    check(out.returncode == 0 and len(done) == 1, f"a run prints its final progress line once: {done}")
    out = recofold(EXE, ["study", "--config", "s.toml", "--out", "fresh"], tmp, quiet=False)
    done = [ln for ln in out.stderr.splitlines() if "done in" in ln]
    check(out.returncode == 0 and len(done) == 1, f"a resume prints its final progress line once: {done}")
    check("overhead" not in out.stdout and "no case left to run" in out.stdout,
          "a resume with nothing to do says so (no overhead figure): " +
          " | ".join(ln for ln in out.stdout.splitlines() if ln.startswith("wall")))


def check_image_files(check, tmp):
    images = os.path.join(tmp, "fresh", "images")
    seen = {}
    for name in sorted(os.listdir(images)):
        with h5py.File(os.path.join(images, name), "r") as f:
            img, prov = f["image"], f["provenance"]
            case = attr(img, "study_case") or attr(img, "study_measurement")
            seen[attr(img, "study_method") or "truth"] = (img, case)
            check(list(img.attrs["pixel_spacing_mm"]) == [3.125, 3.125],
                  f"{name}: pixel spacing 3.125 mm (200 mm / 64): {list(img.attrs['pixel_spacing_mm'])}")
            cmd = attr(prov, "command") or ""
            check("study" in cmd and "s.toml" in cmd, f"{name}: provenance command '{cmd}'")
            if attr(img, "study_method") == "ista-tv":
                check(attr(img, "method") == "ista" and attr(img, "prior") == "tv", f"{name}: method ista, prior tv")
                check(abs(float(img.attrs["lambda"]) - 0.002) < 1e-12, f"{name}: lambda 0.002")
            if attr(img, "study_method") == "zero-filled":
                check(attr(img, "method") == "zero-filled" and attr(img, "prior") == "none",
                      f"{name}: method zero-filled, prior none")
    check(set(seen) == {"truth", "zero-filled", "ista-tv"}, f"montage images of truth and both methods: {sorted(seen)}")


def check_wording(check, tmp):
    must_succeed(EXE, ["phantom", "--table", os.path.join(SRC, "phantoms", "qc-disk.toml"), "--size", "64",
                       "--out", "p.h5"], tmp, check)
    must_succeed(EXE, ["simulate", "--phantom", "p.h5", "--modality", "ct", "--views", "20", "--out", "ct.h5"], tmp,
                 check)
    with open(os.path.join(tmp, "m.toml"), "w") as f:
        f.write('size = 64\n[[measurement]]\nfile = "ct.h5"\n[mri]\naccel = 2\n[[method]]\nmethod = "zero-filled"\n')
    out = recofold(EXE, ["study", "--config", "m.toml", "--out", "mo"], tmp)
    check(out.returncode == 2 and "is a CT measurement" in out.stderr,
          f"a CT file as [[measurement]]: 'is a CT measurement' (exit {out.returncode}: {out.stderr.strip()})")
    bad = re.compile(r"\b(a|an) (mri|ct|MRI|CT) measurement")
    wrong = re.compile(r"\ba (mri|MRI)\b|\ban (ct|CT)\b|needs a mri")
    sources = glob.glob(os.path.join(SRC, "src", "study", "*.cc")) + glob.glob(os.path.join(SRC, "src", "cli", "*study*.cc"))
    for path in sources:
        text = open(path).read()
        hits = [m.group(0) for m in wrong.finditer(text)]
        hits += [m.group(0) for m in bad.finditer(text) if m.group(2) in ("mri", "ct")]
        check(not hits, f"{os.path.relpath(path, SRC)}: no 'a mri' / 'a ct measurement' wording {hits}")


def main():
    check = Checks()
    qc = os.path.join(SRC, "phantoms", "qc-disk.toml")
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "s.toml"), "w") as f:
            f.write(STUDY.format(qc=qc, lam=0.002))
        with open(os.path.join(tmp, "other.toml"), "w") as f:
            f.write(STUDY.format(qc=qc, lam=0.004))
        check_merge(check, tmp)
        check_progress_lines(check, tmp)
        check_image_files(check, tmp)
        check_wording(check, tmp)
        shutil.rmtree(os.path.join(tmp, "fresh"), ignore_errors=True)
    return check.summary()


if __name__ == "__main__":
    sys.exit(main())
