#!/usr/bin/env python3
"""The shared library exports exactly the functions declared in weft.h (nothing else:
no core, Eigen, Boost or C++ runtime symbol), and the C consumer test calls each one.

usage: check_symbols.py <libweft.so> <weft.h> <c_consumer.c>
Expected set: the WEFT_API declarations of weft.h. Actual set: `nm -D --defined-only`.
"""
import re
import subprocess
import sys


def main() -> int:
    library, header, consumer = sys.argv[1:4]
    with open(header, encoding="utf-8") as f:
        text = f.read()
    declared = set(re.findall(r"WEFT_API\s+[^;(]*?\b(weft_\w+)\s*\(", text))
    nm = subprocess.run(["nm", "-D", "--defined-only", library], check=True,
                        capture_output=True, text=True).stdout
    exported = set()
    for line in nm.splitlines():
        parts = line.split()
        if len(parts) < 3:
            continue
        name = parts[2].split("@")[0]
        # The version node itself (WEFT_0) is an absolute symbol, not code or data.
        if parts[1] == "A" and name == "WEFT_0":
            continue
        exported.add(name)
    failed = False
    if len(declared) < 40:
        print(f"only {len(declared)} declarations found in {header}: the parser is broken")
        failed = True
    extra = sorted(exported - declared)
    missing = sorted(declared - exported)
    if extra:
        print("exported but not declared in weft.h:", *extra, sep="\n  ")
        failed = True
    if missing:
        print("declared in weft.h but not exported:", *missing, sep="\n  ")
        failed = True
    with open(consumer, encoding="utf-8") as f:
        used = set(re.findall(r"\b(weft_\w+)\s*\(", f.read()))
    untested = sorted(declared - used)
    if untested:
        print("declared in weft.h but never called by the C consumer:", *untested, sep="\n  ")
        failed = True
    print(f"{len(declared)} functions declared, {len(exported)} symbols exported")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
