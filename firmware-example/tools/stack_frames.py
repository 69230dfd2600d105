#!/usr/bin/env python3
"""Largest stack frames of a Thumb ELF, read from its disassembly.

Usage: stack_frames.py ELF [N]. For each function, the frame is what its
prologue reserves: `push` (4 bytes a register), `sub sp, #imm`, and
`ldr rX, [pc, ...]; add sp, rX` with a negative literal. Call depth is not
followed: the deepest path is at least the largest single frame.
"""
import re
import subprocess
import sys

elf = sys.argv[1]
top = int(sys.argv[2]) if len(sys.argv) > 2 else 10
dis = subprocess.run(["llvm-objdump", "-d", "--no-show-raw-insn", "-C", elf],
                     capture_output=True, text=True, check=True).stdout
words = {}
for m in re.finditer(r"^\s*([0-9a-f]+):\s+([0-9a-f]{2}) ([0-9a-f]{2}) ([0-9a-f]{2}) ([0-9a-f]{2})\s+\.word", dis, re.M):
    b = [int(x, 16) for x in m.groups()[1:]]
    words[int(m.group(1), 16)] = int.from_bytes(bytes(b), "little", signed=True)
frames = {}
name = None
seen = 0
for line in dis.splitlines():
    h = re.match(r"^[0-9a-f]+ <(.*)>:$", line)
    if h:
        name, seen = h.group(1), 0
        if not name.startswith("$"):
            frames[name] = 0
        continue
    if name is None or name.startswith("$") or seen > 12:
        continue
    seen += 1
    m = re.search(r"push\s+\{([^}]*)\}", line)
    if m:
        frames[name] += 4 * len(m.group(1).split(","))
    m = re.search(r"sub\s+sp, #(\d+)", line)
    if m:
        frames[name] += int(m.group(1))
    m = re.search(r"ldr\s+r\d+, \[pc, #\d+\]\s+@ 0x([0-9a-f]+)", line)
    if m:
        lit = words.get(int(m.group(1), 16))
    m2 = re.search(r"add\s+sp, r\d+", line)
    if m2 and lit is not None and lit < 0:
        frames[name] += -lit
for n, s in sorted(frames.items(), key=lambda x: -x[1])[:top]:
    print(f"{s:7d}  {n[:110]}")
