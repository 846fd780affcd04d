# SPDX-License-Identifier: Apache-2.0
# `make bench`: runs every side-by-side benchmark once and writes bench/results.json and bench/results.md.
#
# Usage: /usr/bin/python3 bench/run_all.py BUILD_DIR [--out-dir bench] [--quick] [--only SUBSTRING]
# Each row: the work, recofold's figure, the reference's figure (Debian's
# scikit-image, PyWavelets, numpy, PyTorch run by this same interpreter), the
# ratio, the target and whether it is met. Rows whose 1-minute load average
# rose above 0.5 per core while they ran are marked "loaded": their figures
# measure the machine's other work as much as ours. Run it on an idle machine
# (`uptime` first); on the shared development machine use `heavy --all`.
#
# Other modules plug rows in with a file bench/rows_<name>.py defining
#   def rows(ctx): -> iterable of dicts made with ctx.row(...)
# (see Context.row below); run_all imports every such file after its own rows.
import argparse
import datetime
import glob
import importlib.util
import json
import os
import platform
import shutil
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np


class Context:
    def __init__(self, build, work, quick):
        self.build = os.path.abspath(build)
        self.binary = os.path.join(self.build, "recofold")
        self.tools = os.path.join(self.build, "tests")
        self.work = work
        self.quick = quick
        self.cores = os.cpu_count() or 1
        self.rows = []

    def tool(self, name):
        return os.path.join(self.tools, name)

    def run(self, args, env=None):
        """Run a command; return (wall seconds, stdout). Raises with its last stderr line on failure."""
        e = dict(os.environ)
        e.update(env or {})
        t0 = time.perf_counter()
        p = subprocess.run(args, capture_output=True, cwd=self.work, env=e, text=True)
        wall = time.perf_counter() - t0
        if p.returncode != 0:
            last = p.stderr.strip().splitlines()[-1] if p.stderr.strip() else ""
            raise RuntimeError(f"{os.path.basename(args[0])} {' '.join(args[1:3])}: exit {p.returncode}: {last}")
        return wall, p.stdout

    def run_rss(self, args, env=None):
        """Wall seconds and peak resident memory (MB) of one child process.

        The peak is read by GNU time (/usr/bin/time -f %M), a small parent: a child forked
        straight from this Python process (numpy, scikit-image and torch loaded, ~250 MB)
        reports the parent's resident memory as its own peak (ru_maxrss survives exec)."""
        e = dict(os.environ)
        e.update(env or {})
        timer = ["/usr/bin/time", "-f", "RSS_KB %M"] if os.path.exists("/usr/bin/time") else []
        t0 = time.perf_counter()
        p = subprocess.Popen(timer + list(args), stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, cwd=self.work,
                             env=e)
        _, status, usage = os.wait4(p.pid, 0)
        wall = time.perf_counter() - t0
        err = p.stderr.read().decode(errors="replace")
        if status != 0:
            raise RuntimeError(f"{' '.join(args[:3])}: exit status {status}")
        kb = [ln for ln in err.splitlines() if ln.startswith("RSS_KB ")]
        if timer and kb:
            return wall, int(kb[-1].split()[1]) / 1024.0
        return wall, usage.ru_maxrss / 1024.0  # without GNU time: an upper bound (includes this parent)

    def row(self, work, ours, reference, ratio, target, met, unit="", note=""):
        return {"work": work, "recofold": ours, "reference": reference, "ratio": ratio, "target": target,
                "met": None if met is None else bool(met), "unit": unit, "note": note}


def best(fn, repeats):
    b = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        b = min(b, time.perf_counter() - t0)
    return b


def key_values(text):
    """'name value' lines (the bench tools' output) as a dict of floats."""
    d = {}
    for line in text.splitlines():
        parts = line.split()
        if len(parts) == 2:
            try:
                d[parts[0]] = float(parts[1])
            except ValueError:
                pass
    return d


def median_wall(ctx, args, repeats, env=None):
    walls, rss = [], []
    for _ in range(repeats):
        w, r = ctx.run_rss(args, env)
        walls.append(w)
        rss.append(r)
    return statistics.median(walls), max(rss)


# ---------------------------------------------------------------- rows
def rows_startup(ctx):
    n = 3 if ctx.quick else 10
    w, rss = median_wall(ctx, [ctx.binary, "--help"], n)
    module = os.path.join(ctx.build, "lib", "librecofold_learn.so")
    if os.path.exists(module):
        # Reference: the same start with the learn module (libtorch) forced in, as when the program linked it.
        wt, rsst = median_wall(ctx, [ctx.binary, "--help"], n, {"LD_PRELOAD": module})
        yield ctx.row("`recofold --help`, median of %d, vs. the learn module preloaded" % n,
                      "%.1f ms, %.0f MB" % (w * 1e3, rss), "%.1f ms, %.0f MB" % (wt * 1e3, rsst), wt / w,
                      "<= 20 ms, <= 30 MB", w <= 0.020 and rss <= 30, unit="x faster")
    else:
        yield ctx.row("`recofold --help`, median of %d" % n, "%.1f ms, %.0f MB" % (w * 1e3, rss), "-", None,
                      "<= 20 ms, <= 30 MB", w <= 0.020 and rss <= 30)
    for i in (1, 2):
        ctx.run([ctx.binary, "-q", "phantom", "--table", os.path.join(ROOT, "phantoms", "shepp-logan-modified.toml"),
                 "--size", "256", "--out", f"img{i}.h5", "--supersample", str(i)])
    w, rss = median_wall(ctx, [ctx.binary, "-q", "score", "--reference", "img1.h5", "--image", "img2.h5"], n)
    yield ctx.row("`recofold score` of two 256² images, median of %d" % n, "%.1f ms, %.0f MB" % (w * 1e3, rss), "-",
                  None, "<= 30 ms, <= 30 MB", w <= 0.030 and rss <= 30)


def ct_tool_times(ctx, n, views, repeats):
    _, out = ctx.run([ctx.tool("recon_ct_tool"), "bench", str(n), str(views), str(repeats)])
    return json.loads(out)


def skimage_ct(n, views, repeats):
    from skimage.transform import iradon, radon
    rng = np.random.default_rng(1)
    yy, xx = np.mgrid[:n, :n] - n // 2
    img = rng.random((n, n)) * ((yy ** 2 + xx ** 2) < (n // 2) ** 2)
    theta = np.arange(views) * 180.0 / views
    sino = radon(img, theta=theta, circle=True)
    fp = best(lambda: radon(img, theta=theta, circle=True), repeats)
    fbp = best(lambda: iradon(sino, theta=theta, filter_name="ramp", circle=True), repeats)
    return fp, fbp


def rows_ct(ctx):
    reps = 1 if ctx.quick else 3
    growth = []
    for n, views in ((128, 90), (256, 180), (512, 360)):
        ours = ct_tool_times(ctx, n, views, reps)
        growth.append((n, views, ours))
    ours = growth[-1][2]
    sk_fp, sk_fbp = skimage_ct(512, 360, 1 if ctx.quick else 2)
    fp_key, fbp_key = "project_s", "fbp_s"
    yield ctx.row("CT projection 512² × 360, in-process", "%.1f ms" % (ours[fp_key] * 1e3),
                  "`radon` %.0f ms" % (sk_fp * 1e3), sk_fp / ours[fp_key], ">= 60×", sk_fp / ours[fp_key] >= 60)
    yield ctx.row("FBP 512² × 360, in-process", "%.1f ms" % (ours[fbp_key] * 1e3),
                  "`iradon` %.0f ms" % (sk_fbp * 1e3), sk_fbp / ours[fbp_key], ">= 40×", sk_fbp / ours[fbp_key] >= 40)
    # Whole process: simulate a discrete-truth sinogram, reconstruct by FBP.
    ctx.run([ctx.binary, "-q", "phantom", "--table", os.path.join(ROOT, "phantoms", "shepp-logan-modified.toml"),
             "--size", "512", "--out", "ph512.h5", "--supersample", "0"])
    sim = [ctx.binary, "-q", "simulate", "--phantom", "ph512.h5", "--modality", "ct", "--truth", "discrete",
           "--views", "360", "--detectors", "512", "--out", "ct512.h5"]
    w_sim = min(ctx.run_rss(sim)[0] for _ in range(reps))
    yield ctx.row("CT projection 512² × 360, whole process (`simulate --truth discrete`)", "%.0f ms" % (w_sim * 1e3),
                  "`radon` %.0f ms" % (sk_fp * 1e3), sk_fp / w_sim, ">= 20×", sk_fp / w_sim >= 20)
    rec = [ctx.binary, "-q", "recon", "--meas", "ct512.h5", "--method", "fbp", "--out", "fbp512.h5"]
    w_rec = min(ctx.run_rss(rec)[0] for _ in range(reps))
    yield ctx.row("FBP 512² × 360, whole process (`recon --method fbp`)", "%.0f ms" % (w_rec * 1e3),
                  "`iradon` %.0f ms" % (sk_fbp * 1e3), sk_fbp / w_rec, ">= 20×", sk_fbp / w_rec >= 20)
    base = growth[0]
    for n, views, t in growth:
        order = (n * n * views) / (base[0] ** 2 * base[1])
        yield ctx.row("growth: CT projection %d² × %d vs 128² × 90" % (n, views), "%.2f ms" % (t[fp_key] * 1e3),
                      "order N²·views: ×%.0f" % order, t[fp_key] / base[2][fp_key], "≈ order", None,
                      note="measured ×%.1f" % (t[fp_key] / base[2][fp_key]))


def rows_sense(ctx):
    _, out = ctx.run([ctx.tool("ops_fft_tool"), "bench-sense", "256", "256", "8", "5" if ctx.quick else "20"],
                     env={"OMP_NUM_THREADS": "2"})
    d = key_values(out)
    yield ctx.row("SENSE E forward + adjoint, 256², 8 coils", "%.2f ms" % d["sense_ms"],
                  "raw FFTW %.2f ms" % d["raw_fftw_ms"], d["ratio"], "<= 1.3×", d["ratio"] <= 1.3)
    base = None
    for n in (128, 256, 512):
        _, out = ctx.run([ctx.tool("ops_fft_tool"), "bench-fft", str(n), str(n), "5" if ctx.quick else "20"],
                         env={"OMP_NUM_THREADS": "2"})
        ms = key_values(out)["centred_fft_ms"]
        x = np.zeros((n, n), np.complex64)
        ref = best(lambda: np.fft.fftshift(np.fft.fft2(np.fft.ifftshift(x), norm="ortho")), 3 if ctx.quick else 10)
        if base is None:
            base = (n, ms)
        order = (n * n * np.log2(n)) / (base[0] ** 2 * np.log2(base[0]))
        yield ctx.row("centred FFT %d² (growth vs 128²: order N² log N ×%.1f)" % (n, order), "%.3f ms" % ms,
                      "numpy %.2f ms" % (ref * 1e3), ref / (ms * 1e-3), ">= 2×", ref / (ms * 1e-3) >= 2,
                      note="measured growth ×%.1f" % (ms / base[1]))


def tv_objective(u, f, w):
    """1/2||u - f||^2 + w * isotropic TV(u), forward differences, Neumann (0 across the last row/column)."""
    u = u.astype(np.float64)
    gy = np.zeros_like(u)
    gx = np.zeros_like(u)
    gy[:-1] = u[1:] - u[:-1]
    gx[:, :-1] = u[:, 1:] - u[:, :-1]
    return 0.5 * np.sum((u - f) ** 2) + w * np.sum(np.sqrt(gy ** 2 + gx ** 2))


def rows_tv(ctx):
    from skimage.restoration import denoise_tv_chambolle
    n, iters, w = 1024, 100, 0.1
    rng = np.random.default_rng(2)
    yy, xx = np.mgrid[:n, :n] / n
    f = ((((yy - 0.5) ** 2 + (xx - 0.5) ** 2) < 0.1) * 0.8 + 0.1 + 0.1 * rng.standard_normal((n, n))).astype(np.float32)
    f.tofile(os.path.join(ctx.work, "tv_in.raw"))
    args = [ctx.tool("priors_tv_tool"), "iso", str(n), str(n), str(w), str(iters), "tv_in.raw", "tv_out.raw"]
    ours = min(ctx.run(args)[0] for _ in range(1 if ctx.quick else 3))
    u = np.fromfile(os.path.join(ctx.work, "tv_out.raw"), np.float32).reshape(n, n)
    # skimage's Chambolle (2004) iteration solves the same problem (weight = w); eps = 0 runs every iteration.
    try:
        run = lambda: denoise_tv_chambolle(f, weight=w, eps=0.0, max_num_iter=iters)
        ref_u = run()
    except TypeError:
        run = lambda: denoise_tv_chambolle(f, weight=w, eps=0.0, n_iter_max=iters)
        ref_u = run()
    ref = best(run, 1 if ctx.quick else 2)
    fo, fr = tv_objective(u, f, w), tv_objective(ref_u, f, w)
    yield ctx.row("TV denoising 1024², 100 iterations, whole process (`priors_tv_tool`, raw file in/out)",
                  "%.0f ms, objective %.6g" % (ours * 1e3, fo), "`denoise_tv_chambolle` %.0f ms, objective %.6g" %
                  (ref * 1e3, fr), ref / ours, ">= 3×, objective no higher", ref / ours >= 3 and fo <= fr * (1 + 1e-6))


def rows_memory(ctx):
    # 512², 8 coils, R = 4 lines: peak resident memory of `recon --method fista` vs its k-space + coil maps.
    ctx.run([ctx.binary, "-q", "phantom", "--table", os.path.join(ROOT, "phantoms", "shepp-logan-modified.toml"),
             "--size", "512", "--out", "ph512m.h5", "--supersample", "0"])
    ctx.run([ctx.binary, "-q", "mask", "--size", "512", "--pattern", "lines-vd", "--accel", "4", "--out",
             "mask512.h5"])
    ctx.run([ctx.binary, "-q", "simulate", "--phantom", "ph512m.h5", "--modality", "mri", "--truth", "discrete",
             "--mask", "mask512.h5", "--coils", "8", "--noise", "0.003", "--out", "mri512.h5"])
    w, rss = ctx.run_rss([ctx.binary, "-q", "recon", "--meas", "mri512.h5", "--method", "fista", "--lambda", "0.01",
                          "--out", "fista512.h5"])
    data_mb = 2 * 8 * 512 * 512 * 8 / 1048576.0  # complex64 k-space grid and coil maps, 8 coils each
    yield ctx.row("peak memory, FISTA 512², 8 coils (`recon --method fista`, %.1f s)" % w, "%.0f MB" % rss,
                  "k-space + maps %.0f MB" % data_mb, rss / data_mb, "<= 3×", rss / data_mb <= 3)


ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def context_block(ctx):
    def version(mod):
        try:
            return __import__(mod).__version__
        except Exception:
            return "absent"

    def dpkg(name):
        try:
            return subprocess.run(["dpkg-query", "-W", "-f=${Version}", name], capture_output=True, text=True,
                                  check=True).stdout
        except Exception:
            return "unknown"

    cpu = "unknown"
    try:
        with open("/proc/cpuinfo") as f:
            cpu = next(l.split(":", 1)[1].strip() for l in f if l.startswith("model name"))
    except Exception:
        pass
    build_type = "unknown"
    try:
        with open(os.path.join(ctx.build, "CMakeCache.txt")) as f:
            build_type = next((l.split("=", 1)[1].strip() for l in f if l.startswith("CMAKE_BUILD_TYPE:")), "")
    except Exception:
        pass
    rev = subprocess.run(["git", "-C", ROOT, "rev-parse", "--short", "HEAD"], capture_output=True, text=True).stdout
    dirty = subprocess.run(["git", "-C", ROOT, "status", "--porcelain", "--untracked-files=no"], capture_output=True,
                           text=True).stdout.strip()
    return {
        "date": datetime.datetime.now(datetime.timezone.utc).isoformat(timespec="seconds"),
        "cpu": cpu, "cores": ctx.cores, "load_average_start": os.getloadavg(),
        "python": platform.python_version(), "numpy": version("numpy"), "scikit-image": version("skimage"),
        "pywavelets": version("pywt"), "torch": version("torch"), "fftw": dpkg("libfftw3-single3"),
        "eigen": dpkg("libeigen3-dev"), "git_revision": rev.strip() + (" (modified)" if dirty else ""),
        "build_type": build_type, "OMP_NUM_THREADS": os.environ.get("OMP_NUM_THREADS", "(unset)"),
    }


def fmt_ratio(r):
    return "-" if r is None else ("%.2f×" % r if r < 10 else "%.0f×" % r)


def markdown(ctx_block, rows):
    lines = ["# recofold benchmarks (`make bench`)", "", "For research use only: not for diagnosis or treatment.", "",
             "## Context", ""]
    for k, v in ctx_block.items():
        lines.append(f"- {k}: {v}")
    lines += ["", "## Results", "", "| work | recofold | reference | ratio | target | met | load |",
              "|---|---|---|---|---|---|---|"]
    for r in rows:
        met = "-" if r["met"] is None else ("yes" if r["met"] else "**no**")
        load = "**loaded %.1f**" % r["load_max"] if r["loaded"] else "%.1f" % r["load_max"]
        note = f" ({r['note']})" if r.get("note") else ""
        lines.append(f"| {r['work']}{note} | {r['recofold']} | {r['reference']} | {fmt_ratio(r['ratio'])} | "
                     f"{r['target']} | {met} | {load} |")
    lines.append("")
    return "\n".join(lines)


def main():
    ap = argparse.ArgumentParser(description="Run every recofold benchmark side by side with its reference.")
    ap.add_argument("build")
    ap.add_argument("--out-dir", default=os.path.join(ROOT, "bench"))
    ap.add_argument("--quick", action="store_true", help="fewer repeats (a smoke run, not for quoting)")
    ap.add_argument("--only", default="", help="run only row groups whose name contains this")
    args = ap.parse_args()
    work = tempfile.mkdtemp(prefix="recofold-bench-")
    ctx = Context(args.build, work, args.quick)
    groups = [("startup", rows_startup), ("ct", rows_ct), ("sense", rows_sense), ("tv", rows_tv), ("memory", rows_memory)]
    for path in sorted(glob.glob(os.path.join(ROOT, "bench", "rows_*.py"))):
        spec = importlib.util.spec_from_file_location(os.path.basename(path)[:-3], path)
        mod = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(mod)
        groups.append((os.path.basename(path)[5:-3], mod.rows))
    block = context_block(ctx)
    rows = []
    t_start = time.perf_counter()
    try:
        for name, fn in groups:
            if args.only and args.only not in name:
                continue
            print(f"bench: {name} ...", file=sys.stderr, flush=True)
            gen = fn(ctx)
            while True:
                load0 = os.getloadavg()[0]
                try:
                    r = next(gen)
                except StopIteration:
                    break
                except Exception as e:  # one failing group does not lose the others
                    rows.append({"work": name, "recofold": "-", "reference": "-", "ratio": None, "target": "-",
                                 "met": False, "unit": "", "note": "failed: " + str(e), "load_max": os.getloadavg()[0],
                                 "loaded": False})
                    break
                load = max(load0, os.getloadavg()[0])
                r["load_max"] = load
                r["loaded"] = load > 0.5 * ctx.cores
                r["group"] = name
                rows.append(r)
                print(f"  {r['work']}: {r['recofold']} vs {r['reference']} ({fmt_ratio(r['ratio'])})",
                      file=sys.stderr, flush=True)
    finally:
        shutil.rmtree(work, ignore_errors=True)
    block["load_average_end"] = os.getloadavg()
    block["seconds"] = round(time.perf_counter() - t_start, 1)
    os.makedirs(args.out_dir, exist_ok=True)
    result = {"context": block, "rows": rows, "note": "For research use only: not for diagnosis or treatment."}
    for name, text in (("results.json", json.dumps(result, indent=1)), ("results.md", markdown(block, rows))):
        tmp = os.path.join(args.out_dir, "." + name + ".tmp")
        with open(tmp, "w") as f:
            f.write(text)
        os.replace(tmp, os.path.join(args.out_dir, name))
    print(f"bench: wrote {args.out_dir}/results.json and results.md ({block['seconds']} s)", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
