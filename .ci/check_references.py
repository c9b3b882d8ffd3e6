#!/usr/bin/env python3
"""Fails when a tracked file cites an entry of docs/REFERENCES.md that does not exist.

A citation is `REFERENCES.md §N` (a section) or `§N #K` (a row of a section's table); every
`§…` on a line that names REFERENCES.md is checked. The old name REFERENCE.md is refused.
"""
import re
import subprocess
import sys

refs = open("docs/REFERENCES.md", encoding="utf-8").read()
sections = {}
current = None
for line in refs.splitlines():
    m = re.match(r"## (\d+)\.", line)
    if m:
        current = m.group(1)
        sections[current] = set()
        continue
    m = re.match(r"\| (\w+) \|", line)
    if m and current:
        sections[current].add(m.group(1))

bad = []
files = subprocess.run(["git", "ls-files"], capture_output=True, text=True, check=True).stdout.split()
for f in files:
    if f == "docs/REFERENCES.md" or f.startswith(".ci/"):
        continue
    try:
        text = open(f, encoding="utf-8").read()
    except (UnicodeDecodeError, IsADirectoryError, FileNotFoundError):
        continue
    for n, line in enumerate(text.splitlines(), 1):
        if re.search(r"\bREFERENCE\.md", line):
            bad.append(f"{f}:{n}: cites REFERENCE.md, which is not in the repository")
        if "REFERENCES.md" not in line:
            continue
        for sec, row in re.findall(r"§(\d+)(?: #(\w+))?", line):
            if sec not in sections:
                bad.append(f"{f}:{n}: §{sec} is not a section of docs/REFERENCES.md")
            elif row and row not in sections[sec]:
                bad.append(f"{f}:{n}: §{sec} #{row} is not a row of docs/REFERENCES.md §{sec}")
for b in bad:
    print(b, file=sys.stderr)
count = len(files)
if bad:
    sys.exit(1)
print(f"every docs/REFERENCES.md citation in {count} tracked files points to an entry")
