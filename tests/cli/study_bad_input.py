#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recofold study` bad input: unknown axis, empty grid, missing model file,
# shard 3/2, a bad merge; each exits 2, names the problem and writes nothing.
import os
import subprocess
import sys
import tempfile

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", ".")
failures = []

GOOD = f"""
size = 32
[[phantom]]
table = "{SRC}/phantoms/qc-disk.toml"
[mri]
accel = 2
[[method]]
method = "zero-filled"
"""


def case(name, args, must_mention, workdir):
    before = set(os.listdir(workdir))
    out = subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=workdir)
    after = set(os.listdir(workdir))
    problems = []
    if out.returncode != 2:
        problems.append(f"exit {out.returncode}, expected 2")
    for word in must_mention:
        if word not in out.stderr:
            problems.append(f"message does not name '{word}'")
    if after != before:
        problems.append(f"wrote {sorted(after - before)}")
    if out.stdout.strip():
        problems.append("printed to stdout: " + out.stdout.strip()[:200])
    print(("ok   " if not problems else "FAIL ") + name + ": " + out.stderr.strip())
    for p in problems:
        print("       " + p)
        failures.append(f"{name}: {p}")


def main():
    with tempfile.TemporaryDirectory() as tmp:
        def write(name, text):
            with open(os.path.join(tmp, name), "w") as f:
                f.write(text)

        write("good.toml", GOOD)
        write("axis.toml", GOOD.replace("[mri]", "[mri]\necho_time = 5"))
        write("empty.toml", GOOD.replace('method = "zero-filled"', 'method = "fbp"'))
        write("noproto.toml", GOOD.replace("[mri]\naccel = 2\n", ""))
        write("model.toml", GOOD + '[[method]]\nmethod = "unrolled"\nmodality = "mri"\nmodel = "missing-model.h5"\n')
        os.mkdir(os.path.join(tmp, "not-a-study"))
        case("unknown axis", ["study", "--config", "axis.toml", "--out", "o1"], ["axis.toml", "mri.echo_time"], tmp)
        case("empty grid (no method for the protocol)", ["study", "--config", "empty.toml", "--out", "o2"],
             ["empty.toml", "empty grid"], tmp)
        case("empty grid (no protocol)", ["study", "--config", "noproto.toml", "--out", "o3"],
             ["noproto.toml", "empty grid"], tmp)
        case("missing model file", ["study", "--config", "model.toml", "--out", "o4"],
             ["model.toml", "method[1].model", "missing-model.h5"], tmp)
        case("shard 3/2", ["study", "--config", "good.toml", "--out", "o5", "--shard", "3/2"], ["--shard", "3/2"], tmp)
        case("missing config", ["study", "--config", "nope.toml", "--out", "o6"], ["nope.toml"], tmp)
        case("merge of a non-study folder", ["study", "--merge", "not-a-study", "not-a-study", "--out", "o7"],
             ["not-a-study", "manifest.json"], tmp)
        case("output parent missing", ["study", "--config", "good.toml", "--out", "no/such/dir"], ["--out"], tmp)
    if failures:
        print(f"{len(failures)} failure(s)")
        sys.exit(1)
    print("all study bad-input cases exit 2 and write nothing")


if __name__ == "__main__":
    main()
