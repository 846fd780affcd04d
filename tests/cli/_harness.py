# SPDX-License-Identifier: Apache-2.0
# Shared by the CLI tests (not a test itself: CMake skips files starting with "_").
# One bad-input rule for every command: exit code 2, a message naming each
# expected word (file, line, key, flag), and no file left behind.
import os


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
