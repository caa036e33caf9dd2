#!/usr/bin/env python3
"""Copy a field book, removing every starting coordinate that is neither
held nor weighted, so that cairn must compute the starts itself.

usage: strip_starts.py IN.cfb OUT.cfb
Held (`hold en|h|enh`) and weighted (`sd-en`, `sd-h`) components keep their
values; the others lose their `e`/`n`/`h` words. Quoted words are kept.
"""
import shlex
import sys


def strip(line):
    words = line.split("#", 1)[0].split()
    if not words or words[0] != "mark":
        return line
    toks = shlex.split(line.split("#", 1)[0], posix=True)
    kv = {toks[i]: toks[i + 1] for i in range(2, len(toks) - 1, 2)}
    hold = kv.get("hold", "")
    keep_en = "en" in hold or "sd-en" in kv
    keep_h = "h" in hold.replace("en", "") or hold == "enh" or "sd-h" in kv
    out = toks[:2]
    for i in range(2, len(toks) - 1, 2):
        k, v = toks[i], toks[i + 1]
        if k in ("e", "n") and not keep_en:
            continue
        if k == "h" and not keep_h:
            continue
        out += [k, '"' + v + '"' if (" " in v or not v) else v]
    return " ".join(out) + "\n"


with open(sys.argv[1]) as f, open(sys.argv[2], "w") as g:
    for line in f:
        g.write(strip(line))
