#!/usr/bin/env python3
"""Instruction profile from a QEMU trace (`-singlestep -d exec,nochain -D FILE`).

Usage: profile_trace.py TRACE. Every trace line is one executed instruction
(with -singlestep each translation block is one instruction) and names the
function it is in. Regions are cut at each call of `budget::profile_mark`;
instructions in compiler and libm helpers are charged to the last qc-core or
budget function seen before them (their caller, to a first approximation).
"""
import collections
import sys


def short(s):
    if s.startswith("_ZN"):
        parts, i = [], 3
        while i < len(s) and s[i].isdigit():
            j = i
            while s[j].isdigit():
                j += 1
            n = int(s[i:j])
            parts.append(s[j:j + n])
            i = j + n
        return "::".join(p for p in parts if not (p.startswith("h") and len(p) == 17))
    if s.startswith("_RNv"):
        return s.split("_17compiler_builtins")[-1] if "compiler_builtins" in s else s
    return s


regions, cur, last, prev = [], collections.Counter(), "?", ""
with open(sys.argv[1]) as f:
    for line in f:
        sym = line[line.rfind("] ") + 2:].strip()
        if "profile_mark" in sym:
            if "profile_mark" not in prev:
                regions.append(cur)
                cur = collections.Counter()
            prev = sym
            continue
        prev = sym
        ss = short(sym)
        if ss.startswith("qc_core") or ss.startswith("budget"):
            last = ss
            cur[(ss, "self")] += 1
        else:
            cur[(last, ss)] += 1
regions.append(cur)
names = ["speed Value", "cup Counts", "vane Counts", "8 cups (per sample of all 8)"]
for c, name in enumerate(names):
    for k, what, div in [(1, "100 samples", 100), (3, "closing push", 1)]:
        r = regions[4 * c + k]
        total = sum(r.values())
        print(f"== {name}, {what}: {total} instructions ({total / div:.0f} each)")
        agg = collections.Counter()
        for (a, b), n in r.items():
            agg[a] += n
        for a, n in agg.most_common(8):
            helpers = collections.Counter({b: m for (x, b), m in r.items() if x == a and b != "self"})
            top = ", ".join(f"{b[:28]} {m / div:.0f}" for b, m in helpers.most_common(3))
            print(f"  {n / div:8.0f}  {a[:60]:60s} {top}")
