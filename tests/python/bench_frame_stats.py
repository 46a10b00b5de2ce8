"""numpy doing the engine's frame-pair statistics, timed, for crate/engine/benches/frame_stats.rs.

Usage: bench_frame_stats.py DIR WIDTH HEIGHT, where DIR holds a.raw and b.raw (little-endian
16-bit). Computes what engine::ptc::pair_sums gives (means, the 1/(2NM) temporal variance and the
spatial variance of the pair's average) in the usual numpy way, best of 7 runs, and prints
'numpy_ms T' and 'temporal_variance_dn2 V'. A benchmark helper, not a test: it asserts nothing.
"""

import sys
import time

import numpy as np


def stats(a, b):
    a64 = a.astype(np.int64)
    b64 = b.astype(np.int64)
    mean = (a64.sum() + b64.sum()) / (2 * a.size)
    temporal = np.var(a64 - b64) / 2.0
    spatial = np.var((a64 + b64) / 2.0, ddof=1)
    return mean, temporal, spatial


def main():
    folder, w, h = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
    a = np.fromfile(f"{folder}/a.raw", dtype="<u2").reshape(h, w)
    b = np.fromfile(f"{folder}/b.raw", dtype="<u2").reshape(h, w)
    best = float("inf")
    result = None
    for _ in range(7):
        t = time.perf_counter()
        result = stats(a, b)
        best = min(best, time.perf_counter() - t)
    print(f"numpy_ms {best * 1e3:.3f}")
    print(f"temporal_variance_dn2 {result[1]:.12f}")


if __name__ == "__main__":
    main()
