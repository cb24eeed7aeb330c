"""Generator speed: median wall time of 5 in-process runs per formula.

Usage: python scripts/generator_speed.py [FORMULA ...]
Default formulas: C6H6 (217 isomers), C12H26 (355), C6H8O2 (10,893).
Figures go to docs/performance.md (quote the machine load with them).
"""

import statistics
import sys
import time

from elucidate.formula import parse_formula
from elucidate.generate import enumerate_isomers


def main(formulas):
    for text in formulas:
        f = parse_formula(text)
        times, n = [], 0
        for _ in range(5):
            t = time.perf_counter()
            n = sum(1 for _ in enumerate_isomers(f))
            times.append(time.perf_counter() - t)
        med = statistics.median(times)
        print(f"{text:10s} {n:8d} isomers  median {med:7.3f} s  {n / med:8.0f} structures/s")


if __name__ == "__main__":
    main(sys.argv[1:] or ["C6H6", "C12H26", "C6H8O2"])
