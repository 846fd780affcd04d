#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Robustness computed and drawn: a study with a learned model trained at one condition (textured objects,
# R 2, sigma 0.01) over shifts of acceleration, noise and object family. robustness.csv's drops equal the
# paired drops recomputed from results.csv (learned and best classical method, each repetition and object),
# the report has a robustness section with a table and one figure per shifted dimension, SVG and PNG, and
# the PNG copies carry a title and axis labels (ink in the title band and under the x ticks).
import csv
import math
import os
import re
import struct
import sys
import tempfile
import zlib

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from _harness import Checks, recofold, must_succeed, tiny_unrolled_training  # noqa: E402

EXE = os.path.abspath(os.environ.get("RECOFOLD_EXE", "./recofold"))
os.environ["OMP_WAIT_POLICY"] = "PASSIVE"

TRAIN = tiny_unrolled_training()

STUDY = """
size = 32
repetitions = 2
seed = 8
[[phantom]]
family = "textured"
count = 2
seed = 100
[[phantom]]
family = "ellipses"
count = 2
seed = 100
[mri]
accel = [2, 3]
noise = [0.01, 0.02]
[[method]]
method = "zero-filled"
[[method]]
name = "ista-tv"
method = "ista"
prior = "tv"
lambda = 0.003
iters = 5
[[method]]
name = "net"
method = "unrolled"
modality = "mri"
model = "m.h5"
"""


def png_rows(path):
    """RGB rows of a PNG written by recofold (8-bit RGB, filter 0)."""
    data = open(path, "rb").read()
    pos, idat, w, h = 8, b"", 0, 0
    while pos < len(data):
        n = struct.unpack(">I", data[pos:pos + 4])[0]
        kind, body = data[pos + 4:pos + 8], data[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            w, h = struct.unpack(">II", body[:8])
        elif kind == b"IDAT":
            idat += body
        pos += 12 + n
    raw = zlib.decompress(idat)
    return [raw[y * (3 * w + 1) + 1:(y + 1) * (3 * w + 1)] for y in range(h)], w, h


def ink(rows, y0, y1):
    return sum(1 for y in range(y0, y1) for b in rows[y][::3] if b < 128)


def main():
    check = Checks()
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "train.toml"), "w") as f:
            f.write(TRAIN)
        out = recofold(EXE, ["train", "--config", "train.toml", "--out", "m.h5"], tmp)
        if out.returncode != 0 and "learn" in out.stderr:
            print("skipped: this build has no learn module (" + out.stderr.strip() + ")")
            return 0
        check(out.returncode == 0, f"tiny model trains ({out.stderr.strip()})")
        with open(os.path.join(tmp, "s.toml"), "w") as f:
            f.write(STUDY)
        must_succeed(EXE, ["study", "--config", "s.toml", "--out", "o"], tmp, check)
        d = os.path.join(tmp, "o")
        with open(os.path.join(d, "results.csv"), newline="") as f:
            results = list(csv.DictReader(f))
        inside = {(r["object_set"], r["accel"], r["noise"]) for r in results
                  if r["case"].split("|")[2] == "net" and r["in_training_conditions"] == "yes"}
        check(inside == {("textured", "2", "0.01")}, f"the training condition is textured, R 2, sigma 0.01: {inside}")
        # Every row outside says why, naming each shifted dimension; rows inside say nothing.
        net = [r for r in results if r["case"].split("|")[2] == "net"]
        reasons_ok = True
        for r in net:
            why = r["outside_training"]
            want = (["accel"] if r["accel"] != "2" else []) + (["noise"] if r["noise"] != "0.01" else []) + \
                   (["famil"] if r["object_set"] != "textured" else [])
            if r["in_training_conditions"] == "yes":
                reasons_ok &= why == ""
            else:
                reasons_ok &= bool(why) and all(w in why for w in want)
                if not all(w in why for w in want):
                    print(f"     {r['case']}: outside_training '{why}' lacks {want}")
        check(len(net) > 0 and reasons_ok, f"outside_training names the shifted dimensions of each of {len(net)} rows "
                                           f"(e.g. '{next((r['outside_training'] for r in net if r['outside_training']), '')}')")
        check(all(r["outside_training"] == "" for r in results if r["case"].split("|")[2] != "net"),
              "outside_training is blank for classical methods")
        path = os.path.join(d, "robustness.csv")
        if not check(os.path.exists(path), "robustness.csv written"):
            return check.summary()
        with open(path, newline="") as f:
            rob = list(csv.DictReader(f))
        psnr = [r for r in rob if r["metric"] == "psnr"]
        check(len(psnr) == 7, f"7 shifted conditions from the training one (psnr rows: {len(psnr)})")
        check({r["metric"] for r in rob} == {"psnr", "ssim", "nrmse", "hfen"}, "rows for every metric")
        check(all(r["learned_method"] == "net" for r in rob), "learned method net")

        # Recompute each drop from results.csv: train minus shifted, paired by (phantom index, repetition).
        def values(method, obj, accel, noise, metric):
            out = {}
            for r in results:
                if (r["case"].split("|")[2] == method and r["object_set"] == obj and float(r["accel"]) == accel
                        and float(r["noise"]) == noise and not r["error"]):
                    out[(r["phantom"].rsplit("-", 1)[1], r["repetition"])] = float(r[metric])
            return out

        def cond(text):
            m = re.search(r"^(\S+) .*accel=([\d.]+).*noise=([\d.]+)", text)
            return m.group(1), float(m.group(2)), float(m.group(3))

        bad = []
        for r in rob:
            tr, sh = cond(r["training_condition"]), cond(r["shifted_condition"])
            for col, method in (("learned_drop", r["learned_method"]), ("classical_drop", r["classical_method"])):
                a, b = values(method, *tr, r["metric"]), values(method, *sh, r["metric"])
                keys = sorted(set(a) & set(b))
                want = sum(a[k] - b[k] for k in keys) / len(keys)
                # Another object set: other objects, compared unpaired (n counts both conditions' cases).
                n = 2 * len(keys) if r["test"] == "welch t" else len(keys)
                if not math.isclose(float(r[col]), want, rel_tol=1e-4, abs_tol=1e-6) or int(r["n"]) != n:
                    bad.append((r["metric"], r["shift"], col, r[col], want, r["n"], len(keys)))
            lo, hi = float(r["difference_ci95_low"]), float(r["difference_ci95_high"])
            diff = float(r["drop_difference"])
            if not (lo <= diff <= hi) or not math.isclose(diff, float(r["learned_drop"]) - float(r["classical_drop"]),
                                                          rel_tol=1e-6, abs_tol=1e-9):
                bad.append((r["metric"], r["shift"], "difference", diff, lo, hi))
        check(not bad, f"drops equal the paired means from results.csv, difference inside its interval {bad[:3]}")
        check({r["test"] == "welch t" for r in rob if "objects" in r["shift"]} == {True} and
              {r["test"] == "welch t" for r in rob if "objects" not in r["shift"]} == {False},
              "object-set shifts unpaired (Welch t), acquisition shifts paired")
        classical = {r["classical_method"] for r in psnr}
        check(len(classical) == 1 and "net" not in classical, f"one best classical method at training: {classical}")

        with open(os.path.join(d, "report.html")) as f:
            html = f.read()
        start = html.find('<section id="robustness">')
        sec = html[start:html.find("</section>", start)]
        check('<section id="robustness">' in html, "report has a robustness section")
        check(sec.count("<tr>") == 8, f"its table has a row per shifted condition ({sec.count('<tr>') - 1})")
        figs = sorted(n for n in os.listdir(os.path.join(d, "figures")) if n.startswith("robustness-"))
        want = {f"robustness-net-psnr-vs-{dim}.{ext}" for dim in ("accel", "noise", "object-set") for ext in ("svg", "png")}
        check(want <= set(figs), f"one figure per shifted dimension, SVG and PNG: {figs}")
        check(sec.count("<figure>") == 3 and "training condition" in sec, "three figures in the section, ringed training point")
        for name in sorted(want):
            if name.endswith(".png"):
                rows, w, h = png_rows(os.path.join(d, "figures", name))
                check(ink(rows, 0, 18) > 30 and ink(rows, h - 22, h) > 20,
                      f"{name}: title and x-axis label drawn ({ink(rows, 0, 18)}, {ink(rows, h - 22, h)} dark pixels)")
    return check.summary()


if __name__ == "__main__":
    sys.exit(main())
