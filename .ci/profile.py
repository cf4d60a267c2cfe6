#!/usr/bin/env python3
"""Instruction profile from a QEMU execution trace (a developer tool of
`.ci/profile`; not run by CI). Standard library only.

  profile.py collect COUNTS < qemu.log
      Reads a `-d exec,nochain,in_asm` log (run QEMU without -icount: with
      it, blocks are retranslated shorter at its deadlines) and writes, per
      executed instruction address, how many times it ran.
  profile.py symbols ELF COUNTS PER NM
      Instructions per symbol, divided by PER (mains cycles in the run).
  profile.py lines ELF COUNTS PER OBJDUMP SYMBOL
      Instructions per source line inside the symbols whose (mangled) name
      contains SYMBOL.
  profile.py asm ELF COUNTS PER OBJDUMP SYMBOL
      The disassembly of those symbols, each instruction with its count.
"""

import bisect
import collections
import os
import re
import subprocess
import sys

IN_ASM = re.compile(r"^0x([0-9a-f]+):\s")
EXEC = re.compile(r"Trace \d+: 0x[0-9a-f]+ \[[0-9a-f]+/([0-9a-f]+)/")
ADDR = re.compile(r"^\s*([0-9a-f]+):\s")
FUNC = re.compile(r"^[0-9a-f]+ <(.*)>:")
LINE = re.compile(r"^; (/\S+:\d+)")


def collect(out):
    """Per translation block: its instruction addresses; per execution of
    a block start: one count for each of its instructions."""
    blocks = {}
    runs = collections.Counter()
    start = None
    for line in sys.stdin:
        if line.startswith("IN:"):
            start = None
            continue
        m = IN_ASM.match(line)
        if m:
            addr = int(m.group(1), 16)
            if start is None:
                start = addr
                blocks[start] = []
            blocks[start].append(addr)
            continue
        if line.startswith("Trace"):
            start = None
            m = EXEC.search(line)
            if m:
                runs[int(m.group(1), 16)] += 1
    counts = collections.Counter()
    for block, n in runs.items():
        for addr in blocks.get(block, []):
            counts[addr] += n
    with open(out, "w") as f:
        for addr, n in sorted(counts.items()):
            f.write(f"{addr:x} {n}\n")


def read_counts(path):
    with open(path) as f:
        return {int(a, 16): int(n) for a, n in (line.split() for line in f)}


def symbols(elf, counts, per, nm):
    table = []
    out = subprocess.run([nm, "-C", "--numeric-sort", "-S", elf], capture_output=True, text=True, check=True)
    for line in out.stdout.splitlines():
        parts = line.split(None, 3)
        if len(parts) == 4 and parts[2] in "tTwW":
            table.append((int(parts[0], 16) & ~1, int(parts[1], 16), parts[3]))
    starts = [t[0] for t in table]
    totals = collections.Counter()
    for addr, n in read_counts(counts).items():
        i = bisect.bisect_right(starts, addr) - 1
        inside = i >= 0 and addr < table[i][0] + table[i][1]
        totals[table[i][2] if inside else hex(addr)] += n
    for name, n in totals.most_common(25):
        print(f"{n / per:10.1f}  {name[:150]}")
    print(f"{sum(totals.values()) / per:10.1f}  total")


def listing(elf, objdump, symbol):
    """The disassembly of the symbols whose name contains `symbol`, a line
    at a time, with the address of each instruction line (else None)."""
    out = subprocess.run([objdump, "-d", "-l", "--no-show-raw-insn", elf], capture_output=True, text=True, check=True)
    inside = False
    for line in out.stdout.splitlines():
        m = FUNC.match(line)
        if m:
            inside = symbol in m.group(1)
            if inside:
                yield line, None
            continue
        if inside:
            m = ADDR.match(line)
            yield line, int(m.group(1), 16) if m else None


def short(path):
    """A source path relative to the repository, or to the standard
    library's root."""
    for root in (os.getcwd() + "/", "/library/"):
        if root in path:
            return path.split(root, 1)[1]
    return path


def lines(elf, counts, per, objdump, symbol):
    c = read_counts(counts)
    src = "?"
    totals = collections.Counter()
    for line, addr in listing(elf, objdump, symbol):
        m = LINE.match(line)
        if m:
            src = short(m.group(1))
        elif addr is not None:
            totals[src] += c.get(addr, 0)
    for src, n in totals.most_common():
        if n / per >= 0.5:
            print(f"{n / per:8.1f} {src}")
    print(f"{sum(totals.values()) / per:8.1f} total")


def asm(elf, counts, per, objdump, symbol):
    c = read_counts(counts)
    for line, addr in listing(elf, objdump, symbol):
        if addr is None:
            print(line)
        else:
            print(f"{c.get(addr, 0) / per:8.2f} {line}")


def main(argv):
    if len(argv) < 2:
        sys.exit(__doc__)
    cmd, args = argv[1], argv[2:]
    if cmd == "collect" and len(args) == 1:
        collect(args[0])
    elif cmd == "symbols" and len(args) == 4:
        symbols(args[0], args[1], float(args[2]), args[3])
    elif cmd == "lines" and len(args) == 5:
        lines(args[0], args[1], float(args[2]), args[3], args[4])
    elif cmd == "asm" and len(args) == 5:
        asm(args[0], args[1], float(args[2]), args[3], args[4])
    else:
        sys.exit(__doc__)


if __name__ == "__main__":
    main(sys.argv)
