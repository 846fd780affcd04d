#!/usr/bin/python3
# SPDX-License-Identifier: Apache-2.0
# Foundation check through the real executable: TOML inputs with an unknown
# key, a wrong value type or broken syntax give exit 2, one message naming the
# file, the line and the key, and leave no output behind. Exercised through
# three readers of TOML: phantom tables, sampling specs and study configs.
import os
import subprocess
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _harness  # noqa: E402  (shared bad-input rule)

EXE = os.environ.get("RECOFOLD_EXE", "./recofold")
failures = []


def bad_case(name, args, must_mention, workdir):
    return _harness.bad_input_case(name, lambda: subprocess.run([EXE, "--quiet"] + args, capture_output=True, text=True, cwd=workdir), must_mention, workdir, failures, one_line=True)


def main():
    with tempfile.TemporaryDirectory() as tmp:
        def write(name, text):
            with open(os.path.join(tmp, name), "w") as fh:
                fh.write(text)
            return name

        ell = "[[ellipse]]\nintensity = 1.0\na = 0.5\nb = 0.4\n"
        unknown = write("unknown-key.toml", 'name = "k"\n' + ell + "colour = 3\n")
        wrong = write("wrong-type.toml", 'name = "t"\n[[ellipse]]\nintensity = 1.0\na = "wide"\nb = 0.4\n')
        syntax = write("syntax.toml", 'name = "s"\n[[ellipse]]\nintensity = = 1\n')
        bad_case("phantom table, unknown key", ["phantom", "--table", unknown, "--size", "16", "--out", "p.h5"],
                 ["unknown-key.toml:6", "colour"], tmp)
        bad_case("phantom table, wrong type", ["phantom", "--table", wrong, "--size", "16", "--out", "p.h5"],
                 ["wrong-type.toml:4", "ellipse[0].a", "number"], tmp)
        bad_case("phantom table, syntax error", ["phantom", "--table", syntax, "--size", "16", "--out", "p.h5"],
                 ["syntax.toml:3"], tmp)

        spec_unknown = write("spec-unknown.toml", 'kind = "mri-mask"\npattern = "lines-vd"\nsize = 32\n'
                             'accel = 4\nflavour = "x"\n')
        spec_wrong = write("spec-wrong.toml", 'kind = "mri-mask"\npattern = "lines-vd"\nsize = 32\naccel = "four"\n')
        bad_case("mask spec, unknown key", ["mask", "--spec", spec_unknown, "--out", "m.h5"],
                 ["spec-unknown.toml:5", "flavour"], tmp)
        bad_case("mask spec, wrong type", ["mask", "--spec", spec_wrong, "--out", "m.h5"],
                 ["spec-wrong.toml:4", "accel"], tmp)

        study_unknown = write("study-unknown.toml", 'name = "s"\nsize = 32\nmystery_axis = [1, 2]\n')
        bad_case("study config, unknown key", ["study", "--config", study_unknown, "--out", "st"],
                 ["study-unknown.toml:3", "mystery_axis"], tmp)

    if failures:
        print(f"{len(failures)} check(s) failed", file=sys.stderr)
        sys.exit(1)
    print("all TOML bad-input checks passed")


if __name__ == "__main__":
    main()
