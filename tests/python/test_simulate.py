"""`noise-budget simulate`'s noise sources against numpy's generators on the same parameters.

Distribution tests, not matched seeds: for each noise source in isolation (read noise, reset
noise of DDS and single readouts, dark shot noise at a temperature, photon shot noise at low and
high counts, PRNU, DSNU, background light, clipping at 0 DN, at the full well and at the ADC's
full scale, digital and charge binning with a summing well, frame averaging), a scenario is
built whose test-scene patches hold that source (and the chain around it), the command writes
the frame as PGM, and each patch's pixels are compared with numpy drawing the same chain
(simulate_numpy.py, written from SCENARIO.md) with parameters computed here from the scenario's
keys (CODATA constants for kT/C, the doubling law for dark current), not taken from the engine.
One series is checked the same way: its flats against the photon counts in its manifest.

Comparisons per patch (n pixels each side):
- mean, variance, skewness and excess kurtosis: |engine − numpy| ≤ 5 standard errors, each
  side's standard error from the spread of the statistic over 64 batches (valid for any
  distribution, Poisson and clipped ones included); a t-statistic with 63 degrees of freedom
  exceeds 5 with probability about 5·10⁻⁶, so the ~500 comparisons here fail by chance with
  probability about 0.3 % (and the seeds are fixed, so a pass is repeatable);
- a two-sample chi-square test of the histograms (bins merged from the tails until each holds
  ≥ 20 counts of both samples together), Σ(a − b)²/(a + b) with k − 1 degrees of freedom,
  turned into a normal deviate by the Wilson–Hilferty cube root; it fails above 5 (p ≈ 3·10⁻⁷).
A power check shows the comparison fails when numpy is given a 4 % larger read noise.

Run by scripts/test with the project's .venv. Prints 'N passed, M failed' as its last line and
exits non-zero when anything failed or nothing was checked.
"""

import copy
import json
import os
import pathlib
import subprocess
import sys
import tempfile

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
import simulate_numpy as sim  # noqa: E402

ROOT = pathlib.Path(__file__).resolve().parents[2]

BATCHES = 64
Z_MAX = 5.0
CHI_Z_MAX = 5.0
MIN_BIN = 20

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL:", what)


def tool(*args):
    exe = os.environ.get("NOISE_BUDGET_BIN")
    cmd = [exe] if exe else ["cargo", "run", "--quiet", "--locked", "-p", "noise-budget", "--"]
    r = subprocess.run(cmd + list(args), capture_output=True, cwd=ROOT)
    if r.returncode != 0:
        raise SystemExit(f"noise-budget {' '.join(args)} failed: {r.stderr.decode()}")
    return r.stdout.decode("utf-8")


def read_pgm(path):
    data = path.read_bytes()
    # Header: P5, optional comment lines, width height, maxval, one whitespace byte.
    fields = []
    pos = 2
    while len(fields) < 3:
        while data[pos:pos + 1].isspace():
            pos += 1
        if data[pos:pos + 1] == b"#":
            pos = data.index(b"\n", pos) + 1
            continue
        start = pos
        while data[pos:pos + 1].isdigit():
            pos += 1
        fields.append(int(data[start:pos]))
    w, h, maxval = fields
    dtype = ">u2" if maxval > 255 else "u1"
    return np.frombuffer(data[pos + 1:], dtype=dtype).reshape(h, w).astype(np.float64)


# ---- statistics ---------------------------------------------------------------------------

def moments(x):
    m = x.mean()
    d = x - m
    v = (d * d).mean()
    if v <= 0:
        return m, 0.0, None, None
    return m, v, (d ** 3).mean() / v ** 1.5, (d ** 4).mean() / v ** 2 - 3.0


def batch_se(x):
    """Standard errors of the four moments from their spread over batches."""
    parts = np.array_split(x, BATCHES)
    stats = [moments(p) for p in parts]
    out = []
    for i in range(4):
        vals = [s[i] for s in stats]
        if any(v is None for v in vals):
            out.append(None)
        else:
            out.append(np.std(vals, ddof=1) / np.sqrt(BATCHES))
    return out


def chi_square_z(a, b, step):
    """Two-sample chi-square of equal-size samples on a lattice of spacing `step`."""
    lo = min(a.min(), b.min())
    ia = np.rint((a - lo) / step).astype(np.int64)
    ib = np.rint((b - lo) / step).astype(np.int64)
    k = max(ia.max(), ib.max()) + 1
    ca = np.bincount(ia, minlength=k).astype(float)
    cb = np.bincount(ib, minlength=k).astype(float)
    bins_a, bins_b = [], []
    acc_a = acc_b = 0.0
    for x, y in zip(ca, cb):
        acc_a += x
        acc_b += y
        if acc_a + acc_b >= MIN_BIN:
            bins_a.append(acc_a)
            bins_b.append(acc_b)
            acc_a = acc_b = 0.0
    if bins_a:
        bins_a[-1] += acc_a
        bins_b[-1] += acc_b
    bins_a, bins_b = np.array(bins_a), np.array(bins_b)
    dof = len(bins_a) - 1
    if dof < 1:
        return 0.0, dof
    stat = (((bins_a - bins_b) ** 2) / (bins_a + bins_b)).sum()
    # Wilson–Hilferty: (X/k)^(1/3) is nearly normal with mean 1 − 2/(9k), variance 2/(9k).
    z = ((stat / dof) ** (1 / 3) - (1 - 2 / (9 * dof))) / np.sqrt(2 / (9 * dof))
    return z, dof


def compare(engine, numpy_, what, step=1.0):
    """True when the two samples agree; records failures as checks unless `quiet`."""
    problems = []
    me, mn = moments(engine), moments(numpy_)
    se_e, se_n = batch_se(engine), batch_se(numpy_)
    names = ["mean", "variance", "skewness", "excess kurtosis"]
    for i, name in enumerate(names):
        if me[i] is None or mn[i] is None:
            if (me[i] is None) != (mn[i] is None):
                problems.append(f"{name}: defined on one side only")
            continue
        if se_e[i] is None or se_n[i] is None:
            continue
        se = np.hypot(se_e[i], se_n[i])
        if se == 0:
            if me[i] != mn[i]:
                problems.append(f"{name}: {me[i]} against {mn[i]} with no spread")
            continue
        z = abs(me[i] - mn[i]) / se
        if z > Z_MAX:
            problems.append(f"{name}: engine {me[i]:.6g}, numpy {mn[i]:.6g} ({z:.1f} standard errors)")
    z, dof = chi_square_z(engine, numpy_, step)
    if z > CHI_Z_MAX:
        problems.append(f"histograms differ: chi-square z = {z:.1f} ({dof} degrees of freedom)")
    return problems


# ---- scenarios ----------------------------------------------------------------------------

BASE = {
    "version": 1,
    "sensor": {
        "pixel_pitch_um": 4.0, "quantum_efficiency": 0.5, "full_well_e": 100000,
        "read_noise_e": 0.0, "readout": "cds", "dark_current_e_per_s": 0.0,
        "dsnu_e": 0.0, "prnu_percent": 0.0, "adc_bits": 16,
        "system_gain_dn_per_e": 1.0, "black_level_dn": 100,
    },
    "light": {"photons_per_pixel": 2000},
    "exposure": {"time_s": 0.01},
}


def scenario(sensor=None, light=None, exposure=None, **top):
    sc = copy.deepcopy(BASE)
    sc["sensor"].update(sensor or {})
    if light is not None:
        sc["light"] = light
    sc["exposure"].update(exposure or {})
    sc.update(top)
    return sc


# Each case: a name, the scenario, the frame size, and the lattice step of its output values.
# Binned and averaged cases use a 12-bit ADC, so that the 16-bit file holds their output values
# exactly (the summary's `exact` says so; a 16-bit ADC's sum of four would lose two bits).
CASES = [
    ("read noise (cds), photon shot noise at 3.9 to 4000 e⁻",
     scenario({"read_noise_e": 3.0, "system_gain_dn_per_e": 0.5}), (1200, 900), 1.0),
    ("reset noise, dds (2kT/C at 2 fF, 25 °C)",
     scenario({"read_noise_e": 1.0, "readout": "dds", "sense_node_capacitance_ff": 2.0,
               "system_gain_dn_per_e": 0.2}, {"photons_per_pixel": 0}), (1200, 900), 1.0),
    ("reset noise, single (kT/C from a 90 µV/e⁻ conversion gain, 60 °C)",
     scenario({"readout": "single", "conversion_gain_uv_per_e": 90.0,
               "system_gain_dn_per_e": 0.3}, temperature_c=60.0), (1200, 900), 1.0),
    ("dark shot noise (500 e⁻/s at 25 °C doubling every 5 °C, at 35 °C, 10 ms)",
     scenario({"dark_current_e_per_s": 500.0, "dark_current_doubling_c": 5.0},
              {"photons_per_pixel": 100}, temperature_c=35.0), (1200, 900), 1.0),
    ("PRNU 5 %",
     scenario({"prnu_percent": 5.0}, {"photons_per_pixel": 4000}), (1200, 900), 1.0),
    ("DSNU 4 e⁻",
     scenario({"dsnu_e": 4.0}), (1200, 900), 1.0),
    ("background light (100 photons) with PRNU 2 %",
     scenario({"prnu_percent": 2.0}, background_light={"photons_per_pixel": 100}), (1200, 900), 1.0),
    ("clipping at 0 DN and at the full well (3000 e⁻)",
     scenario({"read_noise_e": 2.0, "black_level_dn": 2, "full_well_e": 3000},
              {"photons_per_pixel": 3000}), (1200, 900), 1.0),
    ("clipping at the ADC's full scale (12 bits, K = 2)",
     scenario({"read_noise_e": 2.0, "adc_bits": 12, "system_gain_dn_per_e": 2.0},
              {"photons_per_pixel": 3000}), (1200, 900), 1.0),
    ("digital binning 2 × 2",
     scenario({"read_noise_e": 3.0, "system_gain_dn_per_e": 0.5, "dsnu_e": 1.0, "adc_bits": 12},
              {"photons_per_pixel": 500}, {"binning": 2, "binning_mode": "digital"}), (600, 450), 1.0),
    ("charge binning 2 × 2, summing well 2500 e⁻, full well 1000 e⁻",
     scenario({"read_noise_e": 3.0, "full_well_e": 1000, "summing_well_e": 2500, "dsnu_e": 1.0},
              {"photons_per_pixel": 600}, {"binning": 2, "binning_mode": "charge"}), (600, 450), 1.0),
    ("4 frames averaged",
     scenario({"read_noise_e": 3.0, "system_gain_dn_per_e": 0.5, "prnu_percent": 1.0, "adc_bits": 12},
              {"photons_per_pixel": 1000}, {"frames_averaged": 4}), (600, 450), 0.25),
]


def patches_of(summary):
    return summary["frame"]["patches"]


def run_case(name, sc, size, step, tmp, rng, seed):
    path = tmp / "scenario.json"
    path.write_text(json.dumps(sc))
    out = tmp / "frame.pgm"
    summary = json.loads(tool("simulate", str(path), "--frame", str(out),
                              "--size", f"{size[0]}x{size[1]}", "--seed", str(seed)))
    scale = summary["frame"]["sample_scale"]
    check(summary["frame"]["samples_exact"], f"{name}: the file holds the values exactly")
    img = read_pgm(out) / scale
    params, reference_e = sim.params_from_scenario(sc)
    patches = patches_of(summary)
    check(len(patches) == 12, f"{name}: 12 patches")
    if reference_e == 0:
        # No light: the engine scales the scene to the detection limit; take its level.
        reference_e = summary["frame"]["reference_signal_e"]
    for p, factor in zip(patches, sim.PATCH_FACTORS):
        check(p["light_factor"] == factor, f"{name}: patch factor {p['light_factor']} is {factor}")
        c = p["cell"]
        engine = img[c["y"]:c["y"] + c["height"], c["x"]:c["x"] + c["width"]].ravel()
        signal = np.full(engine.size, factor * reference_e)
        numpy_ = sim.chain(rng, signal, params)
        problems = compare(engine, numpy_, name, step)
        check(not problems, f"{name}, patch ×{factor}: " + "; ".join(problems))
    return img, summary, params, reference_e


def main():
    rng = np.random.default_rng(20261202)
    with tempfile.TemporaryDirectory() as d:
        tmp = pathlib.Path(d)
        first = None
        for i, (name, sc, size, step) in enumerate(CASES):
            result = run_case(name, sc, size, step, tmp, rng, 100 + i)
            if first is None:
                first = result

        # Power: the same comparison, with numpy's read noise 4 % too large, must fail on the
        # dark patch (n = 45 000: the variance's standard error is about 0.7 %).
        img, summary, params, _ = first
        c = patches_of(summary)[0]["cell"]
        engine = img[c["y"]:c["y"] + c["height"], c["x"]:c["x"] + c["width"]].ravel()
        wrong = dict(params, analog_noise_e=params["analog_noise_e"] * 1.04)
        problems = compare(engine, sim.chain(rng, np.zeros(engine.size), wrong), "power")
        check(any(p.startswith("variance") for p in problems),
              f"power check: a 4 % read-noise error is detected ({problems})")

        # A series: each flat is the black level plus a Poisson count of QE × the manifest's
        # photons per pixel, with the PRNU map; the darks are the black level exactly.
        sc = scenario({"prnu_percent": 3.0, "full_well_e": 20000})
        path = tmp / "series.json"
        path.write_text(json.dumps(sc))
        folder = tmp / "series"
        tool("simulate", str(path), "--series", str(folder), "--size", "200x200", "--seed", "4")
        manifest = json.loads((folder / "manifest.json").read_text())
        params, _ = sim.params_from_scenario(sc)
        params["dark_e"] = 0.0
        flats = [f for f in manifest["frames"] if f["kind"] == "flat" and f["path"].endswith("a.pgm")]
        darks = [f for f in manifest["frames"] if f["kind"] == "dark"]
        check(len(flats) == 30 and len(darks) == 66, f"series: {len(flats)} flat and {len(darks)} dark frames")
        check(all((read_pgm(folder / f["path"]) == 100).all() for f in darks[:4]),
              "series: darks without noise sources are the black level")
        for f in [flats[0], flats[8], flats[15], flats[22]]:
            engine = read_pgm(folder / f["path"]).ravel()
            electrons = 0.5 * f["photons_per_pixel"]
            numpy_ = sim.chain(rng, np.full(engine.size, electrons), params)
            problems = compare(engine, numpy_, "series")
            check(not problems, f"series flat {f['path']} ({electrons:.4g} e⁻): " + "; ".join(problems))

        # The scene layout numpy draws for the benchmark is the engine's.
        f = sim.scene_factors(120, 90)
        summary = json.loads(tool("simulate", str(tmp / "scenario.json"), "--frame",
                                  str(tmp / "small.pgm"), "--size", "120x90"))
        for p in patches_of(summary):
            c = p["cell"]
            cell = f[c["y"]:c["y"] + c["height"], c["x"]:c["x"] + c["width"]]
            check((cell == p["light_factor"]).all(), f"numpy's scene layout at patch ×{p['light_factor']}")

    print(f"{passed} passed, {failed} failed")
    if failed or not passed:
        sys.exit(1)


if __name__ == "__main__":
    main()
