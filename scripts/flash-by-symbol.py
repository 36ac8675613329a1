#!/usr/bin/env python3
"""Where a unit firmware's flash goes, by symbol.

    python3 scripts/flash-by-symbol.py [ELF ...]

Without arguments: the three example unit firmwares of
examples/unit-firmware, built by `bash examples/unit-firmware/run.sh size
BIN` (or `cargo test --test firmware_budget`), under
${CARGO_TARGET_DIR:-target}/unit-firmware. Prints the table of
docs/performance.md ("Footprint of the unit firmwares"), one column per
firmware, in bytes:

- lc-core, the reading path: every lc-core function a reader's `read`
  reaches through calls (`bl`, tail calls), `read` included; code used by
  both the reading and start-up (the division) counts here;
- lc-core, start-up only: lc-core's other out-of-line functions (the
  image's checks, the reader's construction);
- the example's own code: `main` and the example's functions (code the
  optimiser inlined into them, such as the header's field checks and the
  reader's construction, counts here);
- vector table and runtime: the vector table, `Reset` and the default
  handlers;
- read-only data: `.rodata` (tables, the line's text, the gate rows);
- the rest of `.text` (alignment padding between functions).

The sum is the firmware's flash as the budget test counts it
(`.vector_table` + `.text` + `.rodata` + `.data`). Needs llvm-nm,
llvm-objdump and llvm-size (rustup's llvm-tools or the distribution's
llvm package).
"""

import os
import re
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
RUNTIME = {
    "__RESET_VECTOR", "__EXCEPTIONS", "__INTERRUPTS", "Reset",
    "DefaultHandler_", "HardFault_", "DefaultPreInit", "main",
}
ROWS = [
    ("read", "lc-core, the reading path (`read` and what it calls)"),
    ("startup", "lc-core, start-up only (image checks, construction)"),
    ("example", "the example's own code (`main` with start-up inlined, the line format, semihosting)"),
    ("runtime", "vector table, `Reset`, default handlers"),
    ("rodata", "read-only data (tables, the line's text, the gate rows)"),
    ("padding", "alignment padding in `.text`"),
]


def run(*args):
    return subprocess.run(args, check=True, capture_output=True, text=True).stdout


def strip_hash(name):
    return re.sub(r"::h[0-9a-f]{16}$", "", name)


def measure(elf):
    sections = {}
    for line in run("llvm-size", "-A", elf).splitlines():
        parts = line.split()
        if len(parts) >= 2 and parts[0].startswith(".") and parts[1].isdigit():
            sections[parts[0]] = int(parts[1])
    flash = sum(sections.get(s, 0) for s in (".vector_table", ".text", ".rodata", ".data"))

    # Text symbols with their sizes and addresses (Thumb bit cleared).
    funcs = {}
    for line in run("llvm-nm", "--print-size", "-C", "--radix=d", elf).splitlines():
        parts = line.split(None, 3)
        if len(parts) != 4 or parts[2] not in "tTrR":
            continue
        addr, size, kind, name = int(parts[0]), int(parts[1]), parts[2], parts[3]
        if size == 0:
            continue
        funcs[strip_hash(name)] = (addr & ~1, size, kind)

    # Call graph from the disassembly: `bl`/`b` to another symbol.
    calls = {}
    current = None
    for line in run("llvm-objdump", "-d", "--no-show-raw-insn", "-C", elf).splitlines():
        m = re.match(r"^[0-9a-f]+ <(.+)>:$", line)
        if m:
            if m.group(1).startswith("$"):
                continue  # a mapping symbol ($t code, $d data) inside a function
            current = strip_hash(m.group(1))
            calls.setdefault(current, set())
            continue
        m = re.search(r"\b(b[a-z]*(\.[nw])?)\s+0x[0-9a-f]+ <([^>+]+)(\+0x[0-9a-f]+)?>", line)
        # A call or tail call lands on a function's first instruction; a
        # branch into the middle of another symbol is data decoded as code.
        if m and current is not None and m.group(4) is None:
            target = strip_hash(m.group(3))
            if target != current:
                calls[current].add(target)

    reading = set()
    todo = [f for f in funcs if re.match(r"lc_core::reader::.*::read$", f)]
    while todo:
        f = todo.pop()
        if f in reading:
            continue
        reading.add(f)
        todo.extend(t for t in calls.get(f, ()) if t.startswith("lc_core::"))

    if os.environ.get("FLASH_BY_SYMBOL_DEBUG"):
        for f in sorted(funcs):
            print(f"{elf}: {'read' if f in reading else '-'} {funcs[f][1]} {f}", file=sys.stderr)
    rows = dict.fromkeys((key for key, _ in ROWS), 0)
    text_named = 0
    for name, (addr, size, kind) in funcs.items():
        if kind in "rR":
            continue  # data: counted with its section
        if name in RUNTIME:
            rows["runtime"] += size
        elif name.startswith("lc_core::"):
            rows["read" if name in reading else "startup"] += size
        else:
            rows["example"] += size
        text_named += size
    # Data symbols in the vector table's section count as the runtime.
    for name in ("__RESET_VECTOR", "__EXCEPTIONS", "__INTERRUPTS"):
        if name in funcs:
            rows["runtime"] += funcs[name][1]
    rows["rodata"] = sections.get(".rodata", 0) + sections.get(".data", 0)
    rows["padding"] = sections.get(".text", 0) - text_named
    vector_named = sum(funcs[n][1] for n in ("__RESET_VECTOR", "__EXCEPTIONS", "__INTERRUPTS") if n in funcs)
    rows["runtime"] += sections.get(".vector_table", 0) - vector_named
    assert sum(rows.values()) == flash, (elf, rows, flash)
    return rows, flash


def main():
    elfs = sys.argv[1:]
    if not elfs:
        target = os.environ.get("CARGO_TARGET_DIR", os.path.join(ROOT, "target"))
        base = os.path.join(target, "unit-firmware", "thumbv6m-none-eabi", "release")
        elfs = [os.path.join(base, b) for b in ("proximity", "level", "metal")]
    measured = [measure(e) for e in elfs]
    names = [os.path.basename(e) for e in elfs]
    print("| | " + " | ".join(names) + " |")
    print("|---|" + "---:|" * len(names))
    for key, label in ROWS:
        cells = " | ".join(f"{m[0][key]:,}".replace(",", " ") for m in measured)
        print(f"| {label} | {cells} |")
    cells = " | ".join(f"**{f:,}**".replace(",", " ") for _, f in measured)
    print(f"| flash | {cells} |")


if __name__ == "__main__":
    main()
