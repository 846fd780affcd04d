#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# `recofold --help` lists every sub-command (one per src/cli/cmd_<name>.cc) with a
# one-line purpose and carries the research-use line; `--version` prints the
# version; both exit 0. Every sub-command's --help exits 0 too.
import concurrent.futures
import glob
import os
import re
import subprocess
import sys

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
SRC = os.environ.get("RECOFOLD_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
RESEARCH_LINE = "For research use only: not for diagnosis or treatment (see SAFETY.md)."
failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


def main():
    commands = sorted(re.sub(r"^cmd_|\.cc$", "", os.path.basename(p))
                      for p in glob.glob(os.path.join(SRC, "src", "cli", "cmd_*.cc")))
    check(len(commands) >= 3, f"found sub-command sources: {commands}")

    out = subprocess.run([EXE, "--help"], capture_output=True, text=True)
    check(out.returncode == 0, "--help exits 0")
    text = out.stdout
    check(RESEARCH_LINE in text, "--help carries the research-use line")
    listed = {}
    in_section = False
    for line in text.splitlines():
        if line.strip() == "Subcommands:":
            in_section = True
            continue
        if in_section:
            m = re.match(r"^  (\S+)\s{2,}(\S.*)$", line)
            if m:
                listed[m.group(1)] = m.group(2)
            elif line.strip() == "":
                in_section = False
    for c in commands:
        check(c in listed and len(listed[c]) > 10, f"--help lists '{c}' with a purpose: {listed.get(c)!r}")

    with concurrent.futures.ThreadPoolExecutor(max_workers=4) as pool:
        subs = list(pool.map(lambda c: subprocess.run([EXE, c, "--help"], capture_output=True, text=True), commands))
    for c, sub in zip(commands, subs):
        check(sub.returncode == 0 and "Usage" in sub.stdout, f"'{c} --help' exits 0 and shows usage")

    ver = subprocess.run([EXE, "--version"], capture_output=True, text=True)
    check(ver.returncode == 0, "--version exits 0")
    check(re.match(r"^recofold \d+\.\d+\.\d+", ver.stdout.strip()) is not None,
          f"--version prints the version: {ver.stdout.strip()!r}")

    if failures:
        print(f"{len(failures)} check(s) failed")
        return 1
    print("help and version checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
