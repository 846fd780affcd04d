# SPDX-License-Identifier: Apache-2.0
# Shared by the CLI tests (not a test itself: CMake skips files starting with "_").
# One bad-input rule for every command: exit code 2, a message naming each
# expected word (file, line, key, flag), and no file left behind.
import os
import subprocess


class Checks:
    """A test's list of checks: checks(cond, what) prints "ok"/"FAIL" and keeps the failures.

    New CLI tests use one of these (and recofold() / must_succeed() below) instead of their own
    check/run helpers; summary() prints the count and returns the test's exit code."""

    def __init__(self):
        self.failures = []

    def __call__(self, cond, what):
        print(("ok   " if cond else "FAIL ") + what)
        if not cond:
            self.failures.append(what)
        return cond

    def summary(self):
        print(f"{len(self.failures)} failure(s)")
        return 1 if self.failures else 0


def recofold(exe, args, cwd, env=None, quiet=True):
    """Runs `exe [--quiet] args` in `cwd`; the subprocess.run result (text output captured)."""
    return subprocess.run([exe] + (["--quiet"] if quiet else []) + list(args), capture_output=True, text=True,
                          cwd=cwd, env=env)


def must_succeed(exe, args, cwd, checks, env=None):
    """recofold() that must exit 0 (a failed check naming the command and its message otherwise)."""
    out = recofold(exe, args, cwd, env)
    checks(out.returncode == 0, " ".join(list(args)[:5]) + f" exits 0 (got {out.returncode}: {out.stderr.strip()})")
    return out


def tiny_unrolled_training(extra_train=""):
    """The smallest useful training config of an unrolled MRI model (32x32 textured objects, R 2,
    sigma 0.01, one iteration of a 2-layer CNN, 2 steps): a few seconds, for tests that need a model
    rather than a good one. `extra_train` adds lines to [train] (e.g. "seed = 5")."""
    return """
[data]
modality = "mri"
size = 32
families = ["textured"]
accel = 2.0
noise = 0.01
[model]
iterations = 1
depth = 2
width = 4
cg_iterations = 2
[train]
steps = 2
batch = 2
validation_count = 2
validation_every = 2
checkpoint_every = 1000
""" + (extra_train.strip() + "\n" if extra_train else "")


def tiny_flow_training(src, steps=100):
    """configs/train-mri-flow.toml shrunk to a 16x16 flow (2 scales x 2 couplings, width 8) trained `steps`
    steps: seconds, for tests that need a flow rather than a good one."""
    import re
    cfg = open(os.path.join(src, "configs", "train-mri-flow.toml")).read()
    for key, value in (("size", "16"), ("scales", "2"), ("couplings", "2"), ("width", "8"), ("steps", str(steps)),
                       ("batch", "8"), ("validation_count", "8"), ("validation_every", "50"),
                       ("checkpoint_every", "50"), ("max_minutes", "5")):
        cfg, n = re.subn(rf"(?m)^{key} = \S+", f"{key} = {value}", cfg)
        assert n == 1, key
    return cfg


def denoise_study_toml(size, family_seed, noise, method):
    """A one-repetition denoising study of two textured objects (family seed `family_seed`) at the
    sigmas `noise`, with zero-filled (the noisy image) and FISTA-TV with lambda auto as the baselines
    and the method table `method` (TOML lines after [[method]]) as the third method."""
    return f"""
size = {size}
repetitions = 1
seed = 3
[[phantom]]
family = "textured"
count = 2
seed = {family_seed}
[denoise]
noise = {list(noise)}
[[method]]
method = "zero-filled"
[[method]]
method = "fista"
prior = "tv"
lambda = "auto"
[[method]]
{method.strip()}
"""


def launcher_free_env(extra=None):
    """This process's environment without MPI launcher and job-array variables (so a test
    decides what the command sees), plus `extra`."""
    env = {k: v for k, v in os.environ.items()
           if not k.startswith(("SLURM_", "SGE_", "PBS_", "LSB_", "OMPI_COMM_WORLD", "PMI_", "RECOFOLD_SHARD"))}
    env.update(extra or {})
    return env


def bad_input_case(name, runner, must_mention, workdir, failures, one_line=False):
    """Runs `runner()` (a subprocess.run result) in `workdir` and checks the bad-input rule.

    Problems are printed and appended to `failures` as "name: problem".
    With `one_line`, the message must also be a single line.
    """
    before = set(os.listdir(workdir))
    out = runner()
    leftovers = sorted(set(os.listdir(workdir)) - before)
    problems = []
    if out.returncode != 2:
        problems.append(f"exit {out.returncode}, expected 2")
    for word in must_mention:
        if word not in out.stderr:
            problems.append(f"message does not name '{word}'")
    if one_line and len([ln for ln in out.stderr.splitlines() if ln.strip()]) != 1:
        problems.append("expected a one-line message")
    if leftovers:
        problems.append(f"left files behind: {leftovers}")
    print(("ok    " if not problems else "FAIL  ") + f"{name}: {out.stderr.strip()}")
    for p in problems:
        print(f"        {p}")
        failures.append(f"{name}: {p}")
    return out


# ---------------------------------------------------------------- the bad-input corpus
# A table of cases, one per line:   name | command | exit | words | left
#   command  the recofold arguments (shell words); a word naming a fixture file
#            is copied into the case's own folder, where the command runs
#   exit     the expected exit code (2 bad input or usage, 1 the work failed)
#   words    comma-separated words the one-line message must contain
#   left     "none": nothing may be left in the case folder (no output, no
#            temporary file) and the inputs must be unchanged; "-": not checked
# Commands whose words start with FULL/ or RO/ write into a small full or
# read-only tmpfs; they need root (mount) and are skipped with a message otherwise.
import concurrent.futures
import hashlib
import shlex
import shutil
import subprocess
import tempfile


def read_corpus(path):
    cases = []
    for lineno, line in enumerate(open(path, encoding="utf-8"), 1):
        line = line.strip()
        if not line or line.startswith("#"):
            continue
        parts = [p.strip() for p in line.split("|")]
        if len(parts) != 5:
            raise SystemExit(f"{path}:{lineno}: expected 5 columns 'name | command | exit | words | left'")
        name, command, code, words, left = parts
        cases.append(dict(name=name, args=shlex.split(command), exit=int(code),
                          words=[w.strip() for w in words.split(",") if w.strip()], left=left, line=lineno))
    return cases


def _digest(folder):
    out = {}
    for root, dirs, files in os.walk(folder):
        for n in dirs + files:
            p = os.path.join(root, n)
            rel = os.path.relpath(p, folder)
            out[rel] = hashlib.sha256(open(p, "rb").read()).hexdigest() if os.path.isfile(p) else "dir"
    return out


def run_corpus_case(exe, case, fixtures, special, env=None):
    """Runs one corpus case; returns (name, problems, message)."""
    work = tempfile.mkdtemp(prefix="case-", dir=os.path.dirname(fixtures))
    try:
        args = []
        for a in case["args"]:
            first = a.split("/")[0]  # "good.h5/x": the fixture good.h5 is needed too
            src = os.path.join(fixtures, first)
            if first and os.path.lexists(src) and not os.path.lexists(os.path.join(work, first)):
                if os.path.isdir(src):
                    shutil.copytree(src, os.path.join(work, first))
                else:
                    shutil.copy(src, os.path.join(work, first))
            for key, folder in special.items():
                a = a.replace(key + "/", folder + "/")
            args.append(a)
        stdout = subprocess.PIPE
        if len(args) >= 2 and args[-2] == ">":  # "> FILE": standard output into FILE (e.g. /dev/full)
            stdout = open(args[-1], "w")
            args = args[:-2]
        before = _digest(work)
        used = {k: v for k, v in special.items() if any(a.startswith(k + "/") for a in case["args"])}
        special_before = {k: sorted(os.listdir(v)) for k, v in used.items()}
        out = subprocess.run([exe] + args, stdout=stdout, stderr=subprocess.PIPE, text=True, cwd=work, env=env,
                             timeout=300)
        problems = []
        if out.returncode != case["exit"]:
            problems.append(f"exit {out.returncode}, expected {case['exit']}")
        lines = [ln for ln in out.stderr.splitlines() if ln.strip()]
        if len(lines) != 1:
            problems.append(f"{len(lines)} message lines, expected one")
        for w in case["words"]:
            if w not in out.stderr:
                problems.append(f"message does not name '{w}'")
        if case["left"] == "none":
            after = _digest(work)
            if after != before:
                changed = sorted(set(after.items()) ^ set(before.items()))
                problems.append(f"left or changed files: {sorted({c[0] for c in changed})}")
            for k, v in used.items():
                if sorted(os.listdir(v)) != special_before[k]:
                    problems.append(f"left files in {k}/")
        return case["name"], problems, out.stderr.strip()
    finally:
        shutil.rmtree(work, ignore_errors=True)


def run_corpus(exe, cases, fixtures, special, workers=2):
    """Runs every case; prints one line each and the counts; returns the failures."""
    failures = []
    # Cases on the shared FULL/RO mounts run one at a time (their "nothing left" check looks there).
    shared = [any(a.startswith(k + "/") for k in special for a in c["args"]) for c in cases]
    with concurrent.futures.ThreadPoolExecutor(max_workers=workers) as pool:
        futures = [pool.submit(run_corpus_case, exe, c, fixtures, special) for c, s in zip(cases, shared) if not s]
        parallel = [f.result() for f in futures]
    serial = [run_corpus_case(exe, c, fixtures, special) for c, s in zip(cases, shared) if s]
    results = []
    for s in shared:
        results.append(serial.pop(0) if s else parallel.pop(0))
    for (name, problems, message), case in zip(results, cases):
        print(("ok    " if not problems else "FAIL  ") + f"[{case['line']}] {name}: {message[:200]}")
        for p in problems:
            print(f"        {p}")
            failures.append(f"{name}: {p}")
    return failures
