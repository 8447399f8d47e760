#!/usr/bin/env python3
"""Regenerate the README's console blocks from the real commands.

Every block that opens with ```console and one `$ runcal ...` line (no other `$` line) is rerun
from the repository root with target/release/runcal, and the lines after the command are replaced
with the command's standard output. Blocks with several commands, or commands that write into /tmp
first, commands that write files, and JSON excerpts are left alone: refresh those by hand. Run `cargo build --release` first.

    python3 demo-data/refresh-readme.py          # rewrite README.md in place
    python3 demo-data/refresh-readme.py --check  # exit 1 if any block is stale
"""

import os
import re
import shlex
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
BINARY = os.path.join(ROOT, "target", "release", "runcal")
BLOCK = re.compile(r"```console\n(\$ runcal [^\n]*)\n(.*?)```", re.S)


def run(command: str) -> str | None:
    argv = shlex.split(command[2:])
    if any(tok in ("|", ";", "&&", ">") or "/tmp/" in tok for tok in argv):
        return None
    # A command that writes files would write them into the repository: refresh it by hand.
    if any(tok in ("--output", "-o", "--out", "--plot", "--save-profile", "--comparison-csv") for tok in argv):
        return None
    # JSON blocks show an excerpt of the output; refresh them by hand.
    if "json" in argv and "--format" in argv:
        return None
    argv[0] = BINARY
    out = subprocess.run(argv, cwd=ROOT, capture_output=True, text=True, check=False)
    return out.stdout


def main() -> int:
    path = os.path.join(ROOT, "README.md")
    with open(path, encoding="utf-8") as f:
        text = f.read()
    stale = []

    def replace(m: re.Match) -> str:
        command, body = m.group(1), m.group(2)
        if "\n$ " in body:
            return m.group(0)
        fresh = run(command)
        if fresh is None:
            return m.group(0)
        if fresh != body:
            stale.append(command)
        return f"```console\n{command}\n{fresh}```"

    new = BLOCK.sub(replace, text)
    if "--check" in sys.argv:
        for c in stale:
            print(f"stale: {c}")
        return 1 if stale else 0
    if new != text:
        with open(path, "w", encoding="utf-8") as f:
            f.write(new)
    for c in stale:
        print(f"refreshed: {c}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
