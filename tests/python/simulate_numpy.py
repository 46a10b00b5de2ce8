"""numpy's version of the simulator's pixel chain (engine simulate/chain.rs), written from
SCENARIO.md and the chain's documented stages, not from the Rust code: used by
test_simulate.py (distribution tests against the engine's frames) and bench_simulate.py
(the same 12 MP frame, timed).

Stages per physical pixel and frame: mean charge (signal + background)·max(0, 1 + p·z) + dark;
a Poisson count of it clipped at the full well; with charge binning the b² charges summed and
clipped at the summing well; plus the DSNU offsets σ_DSNU·z'; plus one normal deviate of the
read-and-reset noise; DN = floor(black + K·e + 1/2) clipped to 0 … 2^bits − 1; digital binning
sums the b² DN; N frames are averaged. z and z' are drawn once (the fixed pattern), the rest
once per frame. Also the test scene's light factors (engine simulate/scene.rs's table).
"""

import numpy as np

# CODATA 2018 exact values (SI Brochure, 9th ed.).
BOLTZMANN = 1.380649e-23
ELEMENTARY_CHARGE = 1.602176634e-19

# The test scene (simulate/scene.rs): patch factors, the ramp's stops, bar periods, contrasts.
PATCH_FACTORS = [0.0] + [2.0 ** k for k in range(-8, 3)]
RAMP_STOPS = (-8.0, 3.0)
BAR_PERIODS = [2, 4, 6, 8, 12, 16]
BAR_CONTRASTS = [0.5, 0.1]
BAND_EDGES = [0.0, 0.5, 0.7, 0.85, 1.0]


def chain(rng, signal_e, p):
    """Output values (DN, float64) of output pixels whose physical pixels each receive
    `signal_e` (1-D array) mean signal electrons. `p` is a dict of the chain's constants."""
    n = signal_e.size
    b2 = p["binning"] ** 2
    mean_light = (signal_e[:, None] + p["background_e"]) * np.ones((1, b2))
    gain = np.ones((n, b2))
    if p["prnu"] > 0:
        gain = np.maximum(0.0, 1.0 + p["prnu"] * rng.standard_normal((n, b2)))
    offsets = np.zeros((n, b2))
    if p["dsnu_e"] > 0:
        offsets = p["dsnu_e"] * rng.standard_normal((n, b2))
    mean = mean_light * gain + p["dark_e"]
    out = np.zeros(n)
    for _ in range(p["frames"]):
        charge = np.minimum(rng.poisson(mean).astype(np.float64), p["full_well_e"])
        if p["mode"] == "charge":
            summed = charge.sum(axis=1)
            if p.get("summing_well_e") is not None:
                summed = np.minimum(summed, p["summing_well_e"])
            e = summed + offsets.sum(axis=1) + p["analog_noise_e"] * rng.standard_normal(n)
            dn = np.clip(np.floor(p["black"] + p["gain"] * e + 0.5), 0, p["full_scale"])
        else:
            e = charge + offsets + p["analog_noise_e"] * rng.standard_normal((n, b2))
            dn = np.clip(np.floor(p["black"] + p["gain"] * e + 0.5), 0, p["full_scale"]).sum(axis=1)
        out += dn
    return out / p["frames"]


def scene_factors(width, height):
    """The test scene's light factor at every output pixel, shape (height, width)."""
    f = np.zeros((height, width))
    rows = [min(height, int(np.floor(height * e))) for e in BAND_EDGES]
    x = np.arange(width)
    # Patches: 6 × 2 cells, edges at floor(n·i/parts).
    top, bottom = rows[0], rows[1]
    for r in range(2):
        y0 = top + (bottom - top) * r // 2
        y1 = top + (bottom - top) * (r + 1) // 2
        for c in range(6):
            x0, x1 = width * c // 6, width * (c + 1) // 6
            f[y0:y1, x0:x1] = PATCH_FACTORS[6 * r + c]
    u = (x + 0.5) / width
    f[rows[1]:rows[2], :] = 2.0 ** (RAMP_STOPS[0] + (RAMP_STOPS[1] - RAMP_STOPS[0]) * u)
    bars = np.ones(width)
    for g, period in enumerate(BAR_PERIODS):
        x0, x1 = width * g // 6, width * (g + 1) // 6
        xs = np.arange(x0, x1)
        bars[x0:x1] = np.where(2 * ((xs - x0) % period) < period, 1.0, -1.0)
    for i, contrast in enumerate(BAR_CONTRASTS):
        f[rows[2 + i]:rows[3 + i], :] = 1.0 + contrast * bars
    return f


def params_from_scenario(sc):
    """The chain's constants from a scenario (SCENARIO.md's model), for the subset the tests
    use: any readout, dark current by the doubling law, single QE, light and background given
    as photons per pixel. Returns (params, signal electrons per pixel at the reference)."""
    s = sc["sensor"]
    x = sc.get("exposure", {})
    t_c = sc.get("temperature_c", 25.0)
    t_k = t_c + 273.15
    qe = s["quantum_efficiency"]
    dark = s["dark_current_e_per_s"] * 2.0 ** (
        (t_c - s.get("dark_current_reference_c", 25.0)) / s.get("dark_current_doubling_c", 6.5)
    ) * x["time_s"]
    readout = s.get("readout", "cds")
    multiple = {"cds": 0.0, "dds": 2.0, "single": 1.0}[readout]
    reset = 0.0
    if multiple > 0:
        c = s.get("sense_node_capacitance_ff")
        if c is None:
            c = ELEMENTARY_CHARGE / (s["conversion_gain_uv_per_e"] * 1e-6) * 1e15
        reset = multiple * BOLTZMANN * t_k * c * 1e-15 / ELEMENTARY_CHARGE ** 2
    bg = sc.get("background_light", {}).get("photons_per_pixel", 0.0) * qe
    mode = x.get("binning_mode", "digital")
    p = {
        "background_e": bg,
        "dark_e": dark,
        "prnu": s.get("prnu_percent", 0.0) / 100.0,
        "dsnu_e": s.get("dsnu_e", 0.0),
        "full_well_e": s["full_well_e"],
        "summing_well_e": s.get("summing_well_e") if mode == "charge" else None,
        "analog_noise_e": (s["read_noise_e"] ** 2 + reset) ** 0.5,
        "gain": s["system_gain_dn_per_e"],
        "black": s.get("black_level_dn", 0.0),
        "full_scale": 2 ** s["adc_bits"] - 1,
        "binning": x.get("binning", 1),
        "mode": mode,
        "frames": x.get("frames_averaged", 1),
    }
    return p, qe * sc["light"]["photons_per_pixel"]
