"""numpy drawing the simulator's test-scene frame, timed, for crate/engine/benches/simulate.rs.

Usage: bench_simulate.py SCENARIO WIDTH HEIGHT, the scenario's light given as photons per pixel.
Builds the scene's light factors and runs the same chain as the engine (simulate_numpy.py: the
fixed patterns, Poisson charge, full-well clip, DSNU, read noise, ADC, binning, averaging) over
every pixel, best of 3 runs, and prints 'numpy_ms T' and 'mean_dn M'. A benchmark helper, not a
test: it asserts nothing.
"""

import json
import pathlib
import sys
import time

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
import simulate_numpy as sim  # noqa: E402


def main():
    sc = json.loads(pathlib.Path(sys.argv[1]).read_text())
    w, h = int(sys.argv[2]), int(sys.argv[3])
    params, reference_e = sim.params_from_scenario(sc)
    rng = np.random.default_rng(1)
    best = float("inf")
    frame = None
    for _ in range(3):
        t = time.perf_counter()
        signal = sim.scene_factors(w, h).ravel() * reference_e
        frame = sim.chain(rng, signal, params).reshape(h, w)
        best = min(best, time.perf_counter() - t)
    print(f"numpy_ms {best * 1e3:.3f}")
    print(f"mean_dn {frame.mean():.6f}")


if __name__ == "__main__":
    main()
