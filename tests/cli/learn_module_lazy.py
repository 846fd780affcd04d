# SPDX-License-Identifier: Apache-2.0
# The learn module (libtorch) is loaded at run time, only by commands that use
# learned models: commands that do not learn never map libtorch, and a missing
# module gives exit 2 with a one-line reason naming the file it looked for.
import os
import subprocess
import sys
import tempfile

EXE = os.environ["RECOFOLD_EXE"]
SRC = os.environ["RECOFOLD_SOURCE_DIR"]
MODULE = os.path.join(os.path.dirname(EXE), "lib", "librecofold_learn.so")
failures = []


def run(args, env_extra=None, cwd=None):
    env = dict(os.environ)
    env.update(env_extra or {})
    return subprocess.run([EXE] + args, capture_output=True, text=True, env=env, cwd=cwd, timeout=300)


def loaded_libraries(args, cwd=None):
    """Shared objects the dynamic loader opened for `recofold args` (from LD_DEBUG=libs)."""
    out = run(args, {"LD_DEBUG": "libs"}, cwd)
    return [ln for ln in out.stderr.splitlines() if "calling init:" in ln], out


# 1. Commands without learned models do not load libtorch (nor the learn module).
with tempfile.TemporaryDirectory() as d:
    for args in (["--help"], ["train", "--help"], ["phantom", "--help"],
                 ["phantom", "--table", os.path.join(SRC, "phantoms", "shepp-logan-modified.toml"), "--size", "32", "--out", "p.h5"]):
        inits, out = loaded_libraries(args, cwd=d)
        torch = [ln for ln in inits if "libtorch" in ln or "librecofold_learn" in ln]
        print(f"{' '.join(args)}: exit {out.returncode}, {len(inits)} libraries initialised, torch: {len(torch)}")
        if out.returncode != 0:
            failures.append(f"{args}: exit {out.returncode}: {out.stderr.strip()[-300:]}")
        if torch:
            failures.append(f"{args}: loaded {torch[0].split('init:')[-1].strip()}")
        if not inits:
            failures.append(f"{args}: LD_DEBUG=libs reported no library at all (check cannot see loads)")

if os.path.exists(MODULE):
    # 2. A command that trains does load it.
    configs = sorted(f for f in os.listdir(os.path.join(SRC, "configs")) if f.startswith("train-"))
    cfg = os.path.join(SRC, "configs", configs[0])
    with tempfile.TemporaryDirectory() as d:
        # An earlier checkpoint makes train refuse (exit 2) right after the module answered.
        open(os.path.join(d, "m.checkpoint.h5"), "w").write("x")
        inits, out = loaded_libraries(["train", "--config", cfg, "--out", "m.h5"], cwd=d)
        print(f"train with a checkpoint present: exit {out.returncode}; learn module loaded: "
              f"{any('librecofold_learn' in ln for ln in inits)}")
        if not any("librecofold_learn" in ln for ln in inits):
            failures.append("train did not load the learn module")
        if out.returncode != 2 or "checkpoint" not in out.stderr:
            failures.append(f"train with a checkpoint: exit {out.returncode}: {out.stderr.strip()[-300:]}")

    # 3. A missing module: exit 2, one line naming the file, nothing written.
    with tempfile.TemporaryDirectory() as d:
        missing = os.path.join(d, "nowhere", "librecofold_learn.so")
        out = run(["train", "--config", cfg, "--out", "m.h5"], {"RECOFOLD_LEARN_MODULE": missing}, cwd=d)
        lines = [ln for ln in out.stderr.splitlines() if ln.strip()]
        print(f"missing module: exit {out.returncode}: {out.stderr.strip()}")
        if out.returncode != 2 or len(lines) != 1 or missing not in out.stderr:
            failures.append(f"missing module: exit {out.returncode}, message {out.stderr.strip()!r}")
        if sorted(os.listdir(d)) != ["nowhere"] and os.listdir(d):
            leftovers = [f for f in os.listdir(d) if f != "nowhere"]
            if leftovers:
                failures.append(f"missing module: left {leftovers}")
        # 4. A file that is not a module: exit 2 naming it and the loader's reason.
        bogus = os.path.join(d, "bogus.so")
        open(bogus, "w").write("not a shared object\n")
        out = run(["train", "--config", cfg, "--out", "m.h5"], {"RECOFOLD_LEARN_MODULE": bogus}, cwd=d)
        print(f"bogus module: exit {out.returncode}: {out.stderr.strip()}")
        if out.returncode != 2 or bogus not in out.stderr or "cannot load" not in out.stderr:
            failures.append(f"bogus module: exit {out.returncode}, message {out.stderr.strip()!r}")
else:
    print(f"no {MODULE}: a build without the learn module; checks 2-4 skipped")

if failures:
    print("FAILURES:\n  " + "\n  ".join(failures))
    sys.exit(1)
print("ok")
