#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recofold study` end to end: a run killed after some rows and rerun equals an
# uninterrupted run; shards merged equal the unsharded run; report.html is
# valid HTML whose embedded images all decode (PNG by its signature and
# chunk CRCs, SVG by an XML parser), with the research-use line.
import base64
import csv
import html.parser
import os
import signal
import struct
import subprocess
import sys
import tempfile
import time
import xml.etree.ElementTree as ET
import zlib

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", ".")
RESEARCH_LINE = "For research use only: not for diagnosis or treatment (see SAFETY.md)."
failures = []

CONFIG = f"""
name = "resume-check"
size = 32
repetitions = 2
seed = 4
[[phantom]]
table = "{SRC}/phantoms/qc-disk.toml"
[[phantom]]
family = "textured"
count = 1
[mri]
accel = [2, 4]
noise = [0.005, 0.01]
[ct]
views = [16, 32]
photons = 1e5
[[method]]
method = "zero-filled"
[[method]]
method = "fbp"
[[method]]
name = "fista-wavelet"
method = "fista"
prior = "wavelet"
levels = 2
lambda = 0.005
iters = 60
modality = "mri"
[[method]]
name = "pdhg-tv"
method = "pdhg"
prior = "tv"
lambda = 0.5
iters = 150
modality = "ct"
"""


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def rows_without_time(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    t = rows[0].index("time")
    for r in rows:
        r[t] = ""
    return rows


def study(args, cwd):
    return subprocess.run([EXE, "--quiet", "study", "--config", "study.toml"] + args, capture_output=True, text=True,
                          cwd=cwd)


class Page(html.parser.HTMLParser):
    VOID = {"meta", "img", "br", "hr", "link", "input", "circle", "line", "rect", "polyline", "path"}

    def __init__(self):
        super().__init__()
        self.stack, self.errors, self.images, self.svg_depth, self.svgs, self.text = [], [], [], 0, [], []
        self.svg_buf = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "img":
            self.images.append(a.get("src", ""))
        if tag == "svg":
            self.svg_buf = []
        if self.svg_buf is not None:
            self.svg_buf.append(self.get_starttag_text())
        if tag not in self.VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        if self.svg_buf is not None:
            self.svg_buf.append(self.get_starttag_text())
        if tag == "img":
            self.images.append(dict(attrs).get("src", ""))

    def handle_endtag(self, tag):
        if self.svg_buf is not None:
            self.svg_buf.append(f"</{tag}>")
        if tag in self.VOID:
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unbalanced </{tag}> (open: {self.stack[-3:]})")
            return
        self.stack.pop()
        if tag == "svg":
            self.svgs.append("".join(self.svg_buf))
            self.svg_buf = None

    def handle_data(self, data):
        self.text.append(data)
        if self.svg_buf is not None:
            self.svg_buf.append(data.replace("&", "&amp;").replace("<", "&lt;"))


def png_ok(data):
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        return False
    pos, idat, width, height = 8, b"", 0, 0
    while pos < len(data):
        (n,) = struct.unpack(">I", data[pos:pos + 4])
        kind, body, crc = data[pos + 4:pos + 8], data[pos + 8:pos + 8 + n], data[pos + 8 + n:pos + 12 + n]
        if struct.unpack(">I", crc)[0] != zlib.crc32(kind + body) & 0xFFFFFFFF:
            return False
        if kind == b"IHDR":
            width, height = struct.unpack(">II", body[:8])
        if kind == b"IDAT":
            idat += body
        pos += 12 + n
    raw = zlib.decompress(idat)
    return width > 0 and height > 0 and len(raw) >= height * (width + 1)


def check_report(path):
    with open(path, encoding="utf-8") as f:
        text = f.read()
    check(text.startswith("<!DOCTYPE html>"), "report starts with a doctype")
    page = Page()
    page.feed(text)
    page.close()
    check(not page.errors and not page.stack, f"report tags balance {page.errors[:3]} {page.stack[-3:]}")
    check(RESEARCH_LINE in "".join(page.text), "report carries the research-use line")
    pngs = [s for s in page.images if s.startswith("data:image/png;base64,")]
    check(len(pngs) >= 2 and len(pngs) == len(page.images), f"{len(pngs)} embedded PNG montages, no external images")
    check(all(png_ok(base64.b64decode(s.split(",", 1)[1], validate=True)) for s in pngs), "every PNG decodes")
    parsed, plots = 0, 0
    for s in page.svgs:
        try:
            root = ET.fromstring(s)
            parsed += root.tag.endswith("svg")
            plots += len(root.findall(".//{http://www.w3.org/2000/svg}polyline")) > 0
        except ET.ParseError as e:
            print("       svg parse error:", e)
    check(parsed == len(page.svgs), f"every inline SVG ({len(page.svgs)}: plots and per-repetition strips) parses")
    check(plots >= 4, f"{plots} inline SVG line plots")
    check('<section id="findings">' in text and text.index('<section id="findings">') < text.index("<table>"),
          "findings section before the first table")
    for word in ["PSNR (dB) vs acceleration R", "SSIM vs views", "fista-wavelet", "pdhg-tv", "Study config"]:
        check(word in text, f"report mentions '{word}'")


def main():
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "study.toml"), "w") as f:
            f.write(CONFIG)
        t0 = time.time()
        r = study(["--out", "whole", "--jobs", "2"], tmp)
        check(r.returncode == 0, f"uninterrupted run exits 0 ({time.time() - t0:.1f} s) {r.stderr.strip()[-300:]}")
        check("report: " in r.stdout, "prints where the report is")
        whole = rows_without_time(os.path.join(tmp, "whole", "results.csv"))
        total = len(whole) - 1
        check(total == 2 * 2 * (4 * 2 + 2 * 2), f"{total} cases in results.csv")

        # Kill after a few rows, then rerun.
        p = subprocess.Popen([EXE, "--quiet", "study", "--config", "study.toml", "--out", "killed", "--jobs", "2"],
                             cwd=tmp, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        res = os.path.join(tmp, "killed", "results.csv")
        deadline = time.time() + 120
        rows = 0
        while time.time() < deadline and p.poll() is None:
            if os.path.exists(res):
                with open(res) as f:
                    rows = f.read().count("\n") - 1
                if rows >= 5:
                    break
            time.sleep(0.02)
        killed_early = p.poll() is None
        p.send_signal(signal.SIGKILL)
        p.wait()
        with open(res) as f:
            rows = f.read().count("\n") - 1
        check(killed_early and 0 < rows < total, f"killed after {rows} of {total} rows")
        r = study(["--out", "killed", "--jobs", "2"], tmp)
        check(r.returncode == 0 and f"{rows} already done" in r.stdout, "rerun resumes: " + r.stdout.splitlines()[0]
              if r.stdout else r.stderr)
        check(rows_without_time(res) == whole, "killed + rerun results.csv equals the uninterrupted run's")

        # Shards and merge.
        for i in (1, 2, 3):
            r = study(["--out", f"shard{i}", "--shard", f"{i}/3", "--jobs", "2"], tmp)
            check(r.returncode == 0, f"shard {i}/3 exits 0")
        r = subprocess.run([EXE, "--quiet", "study", "--merge", "shard1", "shard2", "shard3", "--out", "merged"],
                           capture_output=True, text=True, cwd=tmp)
        check(r.returncode == 0, "merge exits 0 " + r.stderr.strip())
        check(rows_without_time(os.path.join(tmp, "merged", "results.csv")) == whole,
              "merged shards equal the unsharded results.csv")
        r = subprocess.run([EXE, "--quiet", "study", "--merge", "shard1", "shard1", "--out", "overlap"],
                           capture_output=True, text=True, cwd=tmp)
        check(r.returncode == 2 and "overlap" in r.stderr and not os.path.exists(os.path.join(tmp, "overlap")),
              "merge refuses overlapping shards: " + r.stderr.strip())
        with open(os.path.join(tmp, "other.toml"), "w") as f:
            f.write(CONFIG.replace("seed = 4", "seed = 5"))
        r = subprocess.run([EXE, "--quiet", "study", "--config", "other.toml", "--out", "othershard", "--shard", "3/3"],
                           capture_output=True, text=True, cwd=tmp)
        r = subprocess.run([EXE, "--quiet", "study", "--merge", "shard1", "shard2", "othershard", "--out", "mixed"],
                           capture_output=True, text=True, cwd=tmp)
        check(r.returncode == 2 and "different config" in r.stderr and not os.path.exists(os.path.join(tmp, "mixed")),
              "merge refuses a shard of another config: " + r.stderr.strip())

        check_report(os.path.join(tmp, "whole", "report.html"))
        for name in ["summary.csv", "figures/mri-psnr-vs-accel.svg", "figures/montage-mri-0.png",
                     "figures/montage-ct-0.png"]:
            check(os.path.exists(os.path.join(tmp, "whole", name)), f"writes {name}")
        for name in ["mri-psnr-vs-accel.png", "mri-ssim-vs-noise.png", "ct-psnr-vs-views.png"]:
            path = os.path.join(tmp, "whole", "figures", name)
            data = open(path, "rb").read() if os.path.exists(path) else b""
            check(png_ok(data), f"plot {name} is a decodable PNG")
    if failures:
        print(f"{len(failures)} failure(s)")
        sys.exit(1)
    print("study resume, merge and report checks passed")


if __name__ == "__main__":
    main()
