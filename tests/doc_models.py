#!/usr/bin/python3
"""doc_models.py — the model text in the documentation is real.

Every fenced block tagged ```eom in README.md and docs/*.md must pass
`eomc check`; a block tagged ```eom fragment is a piece of a model and is
not run.  A fenced block without a tag whose lines read like model
statements fails the test until it is tagged one way or the other.
README's first model must be examples/seat_rig.eom verbatim.

usage: doc_models.py EOMC SRCDIR WORKDIR
"""
import glob
import os
import re
import subprocess
import sys

STATEMENT = re.compile(r"^(model|coord|param|const|input|let|kinetic|potential|lagrangian|"
                       r"dissipation|force|torque|gravity|body|constraint|frame|output|initial)\b")


def blocks(path):
    """(line, info string, text) of every fenced block."""
    out, info, start, buf = [], None, 0, None
    with open(path, encoding="utf-8") as f:
        for n, line in enumerate(f, 1):
            if line.startswith("```"):
                if buf is None:
                    info, start, buf = line[3:].strip(), n, []
                else:
                    out.append((start, info, "".join(buf)))
                    buf = None
            elif buf is not None:
                buf.append(line)
    return out


def main(argv):
    eomc, src, work = argv[1], argv[2], argv[3]
    os.makedirs(work, exist_ok=True)
    docs = [os.path.join(src, "README.md")] + sorted(glob.glob(os.path.join(src, "docs", "*.md")))
    failures, checked = [], 0
    first_readme_model = None
    for doc in docs:
        rel = os.path.relpath(doc, src)
        for line, info, text in blocks(doc):
            words = info.split()
            if words[:1] == ["eom"] and words[1:] == ["fragment"]:
                continue
            if words == ["eom"]:
                if rel == "README.md" and first_readme_model is None:
                    first_readme_model = text
                path = os.path.join(work, "%s_%d.eom" % (re.sub(r"\W", "_", rel), line))
                with open(path, "w", encoding="utf-8") as f:
                    f.write(text)
                r = subprocess.run([eomc, "check", path], capture_output=True, text=True)
                checked += 1
                if r.returncode != 0:
                    failures.append("%s:%d: `eomc check` fails on this block:\n%s"
                                    % (rel, line, r.stderr))
                continue
            if not words and any(STATEMENT.match(l) for l in text.splitlines()):
                failures.append("%s:%d: a block of model text without a tag: mark it ```eom "
                                "(checked) or ```eom fragment" % (rel, line))
    with open(os.path.join(src, "examples", "seat_rig.eom"), encoding="utf-8") as f:
        seat = f.read()
    if first_readme_model != seat:
        failures.append("README.md: the first ```eom block is not examples/seat_rig.eom verbatim")
    for f in failures:
        print("FAIL: " + f)
    print("%d model blocks checked" % checked)
    return 1 if failures or checked == 0 else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
