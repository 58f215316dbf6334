"""Time pandas.read_csv (C engine) on the slopewise load benchmark file.

Usage: python3 pandas_load.py FILE [REPEATS]
Prints one line: "pandas_mb_per_s <MB/s> seconds <best seconds> rows <n>".
MB is 10^6 bytes, as in the Rust side of `slopewise bench load`.
Tested with pandas 3.1 and numpy 2.4.
"""
import os
import sys
import time

import pandas as pd


def main() -> int:
    path = sys.argv[1]
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 3
    size = os.path.getsize(path)
    best = float("inf")
    rows = 0
    for _ in range(max(repeats, 1)):
        t = time.perf_counter()
        df = pd.read_csv(path, engine="c")
        best = min(best, time.perf_counter() - t)
        rows = len(df)
        del df
    print(f"pandas_mb_per_s {size / 1e6 / best:.1f} seconds {best:.3f} rows {rows}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
