"""Colour and HDR figures of `noise-budget eval` against an independent numpy model.

HDR: from the scenario's own keys (exposures, ratios, read noise, wells, gain, black level,
dark current by its law, DSNU and its dark-current part, PRNU) this script builds each readout's
variance as a function of its signal, stitches them by the rule docs/scenario-format.md states
(switch at f × the readout's capacity, optional linear blend; dual gain shares the charge's shot
noise; fixed pattern fully correlated) and compares each transition's level and SNR dip, the
combined SNR at the scenario's light and the combined dynamic range with the tool's report.
A numpy Monte Carlo (Poisson charge, Gaussian read noise, ADC rounding) of the pixel just below
and just above each hard switch checks the dips by sampling, within 5 standard errors.

Colour: numpy applies the white balance and the colour matrix to sampled raw noise (R, Gr, Gb, B
drawn with the channels' means and variances from the report, the two greens averaged, the
channels correlated as the scenario says) and compares the output means, noise, SNR, noise gain
and the BT.709 luminance with the report, within sampling error.

The signal per pixel (photons through a spectrum and a lens) is taken from the report: that
part is checked elsewhere (reference tests, the CIE tables). Run by scripts/test in the project's
.venv. Prints 'N passed, M failed' last; exits non-zero when anything failed or nothing was checked.
"""

import copy
import json
import math
import os
import pathlib
import subprocess
import sys
import tempfile

import numpy as np

ROOT = pathlib.Path(__file__).resolve().parents[2]
K_EV = 1.380649e-23 / 1.602176634e-19  # Boltzmann's constant in eV/K (CODATA 2018, exact)
VARSHNI = {  # REFERENCES.md §7 parameter sets (E_g(0) eV, α eV/K, β K)
    "varshni_1967": (1.1557, 7.021e-4, 1108.0),
    "thurmond_1975": (1.17, 4.73e-4, 636.0),
    "sze_ng_2007": (1.169, 4.9e-4, 655.0),
}
BT709 = np.array([0.2126, 0.7152, 0.0722])  # ITU-R BT.709 luminance weights (from memory)

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print(f"FAIL: {what}")


def close(got, want, rel, what, abs_tol=0.0):
    check(abs(got - want) <= rel * abs(want) + abs_tol, f"{what}: {got} vs {want}")


def tool_eval(scenario):
    exe = os.environ.get("NOISE_BUDGET_BIN")
    cmd = [exe] if exe else ["cargo", "run", "--quiet", "--locked", "-p", "noise-budget", "--"]
    with tempfile.NamedTemporaryFile("w", suffix=".json", delete=False) as f:
        json.dump(scenario, f)
    r = subprocess.run(cmd + ["eval", f.name], capture_output=True, cwd=ROOT)
    os.unlink(f.name)
    if r.returncode != 0:
        raise SystemExit(f"noise-budget eval failed: {r.stderr.decode()}")
    return json.loads(r.stdout)


# ---- HDR: an independent model of the readouts and the stitch ------------------------------


def dark_rate(sensor, temperature_c):
    """Dark current at temperature (e⁻/s), by the scenario's law (REFERENCES.md §7)."""
    i_ref = sensor["dark_current_e_per_s"]
    t_ref = sensor.get("dark_current_reference_c", 25.0)
    if sensor.get("dark_current_law", "doubling") == "doubling":
        return i_ref * 2.0 ** ((temperature_c - t_ref) / sensor.get("dark_current_doubling_c", 6.5))
    e0, a, b = VARSHNI[sensor.get("band_gap_parameters", "varshni_1967")]
    gap = lambda t: e0 - a * t * t / (t + b)  # noqa: E731
    t, tr = temperature_c + 273.15, t_ref + 273.15
    return i_ref * (t / tr) ** 1.5 * math.exp(gap(tr) / (2 * K_EV * tr) - gap(t) / (2 * K_EV * t))


def readouts(sc):
    """Each readout: scale g, capacity C (e⁻, dark excluded), and its variance parts as
    functions of its signal S: (shot, other temporal, dsnu, prnu). Unbinned, one frame, CDS."""
    s = sc["sensor"]
    assert sc["exposure"].get("binning", 1) == 1 and sc["exposure"].get("frames_averaged", 1) == 1
    assert s.get("readout", "cds") == "cds"
    t = sc["exposure"]["time_s"]
    rate = dark_rate(s, sc.get("temperature_c", 25.0))
    black = s.get("black_level_dn", 0.0)
    full_scale = 2 ** s["adc_bits"] - 1
    p = s.get("prnu_percent", 0.0) / 100
    pd = s.get("dark_current_nonuniformity_percent", 0.0) / 100
    dsnu = s.get("dsnu_e", 0.0)

    def readout(scale, t_j, read, well, gain):
        d = rate * t_j
        level = min(well, (full_scale - black) / gain)
        return {
            "scale": scale,
            "dark": d,
            "capacity": level - d,
            "shot": lambda S, d=d: S + d,
            "other": read**2 + 1 / (12 * gain**2),
            "dsnu": dsnu**2 + (pd * d) ** 2,
            "prnu": lambda S: (p * S) ** 2,
        }

    out = [readout(1.0, t, s["read_noise_e"], s["full_well_e"], s["system_gain_dn_per_e"])]
    h = sc["hdr"]
    if h["kind"] == "exposures":
        g = 1.0
        for e in h["exposures"]:
            g *= e["ratio"]
            out.append(readout(g, t / g, e.get("read_noise_e", s["read_noise_e"]),
                               e.get("full_well_e", s["full_well_e"]), s["system_gain_dn_per_e"]))
    else:
        lg = h["low_gain"]
        out.append(readout(1.0, t, lg["read_noise_e"], lg["full_well_e"], lg["system_gain_dn_per_e"]))
    return out


def snr_alone(r, x, total):
    S = x / r["scale"]
    v = r["shot"](S) + r["other"] + ((r["dsnu"] + r["prnu"](S)) if total else 0.0)
    return S / math.sqrt(v) if S > 0 else 0.0


def snr_blend(a, b, x, w, same_charge, total):
    Sa, Sb = x / a["scale"], x / b["scale"]
    ka, kb = (1 - w) * a["scale"], w * b["scale"]
    va = a["shot"](Sa) + a["other"]
    vb = b["shot"](Sb) + b["other"]
    cov = math.sqrt(a["shot"](Sa) * b["shot"](Sb)) if same_charge else 0.0
    var = ka * ka * va + kb * kb * vb + 2 * ka * kb * cov
    if total:
        fa, fb = a["dsnu"] + a["prnu"](Sa), b["dsnu"] + b["prnu"](Sb)
        cf = math.sqrt(a["dsnu"] * b["dsnu"]) + math.sqrt(a["prnu"](Sa) * b["prnu"](Sb))
        var += ka * ka * fa + kb * kb * fb + 2 * ka * kb * cf
    return x / math.sqrt(var)


def db(x):
    return 20 * math.log10(x)


def check_hdr(name, sc, report, rng):
    h = report["hdr"]
    rs = readouts(sc)
    f = sc["hdr"].get("switch_fraction", 0.9)
    beta = sc["hdr"].get("blend_fraction", 0.0)
    same = sc["hdr"]["kind"] == "dual_gain"
    check(len(h["transitions"]) == len(rs) - 1, f"{name}: one transition per switch")
    for j, t in enumerate(h["transitions"]):
        a, b = rs[j], rs[j + 1]
        x = f * a["capacity"] * a["scale"]
        close(t["level_e"], x, 1e-9, f"{name}: switch {j} level")
        start = (1 - beta) * x
        below = snr_alone(a, start, False)
        if beta > 0:
            ws = np.linspace(0, 1, 4097)
            above = min(snr_blend(a, b, start + w * (x - start), w, same, False) for w in ws)
        else:
            above = snr_alone(b, x, False)
        # The engine searches 256 intervals, this 4096: the minimum of a smooth curve agrees
        # to far below the 1e-4 dB allowed here.
        close(t["snr_below_db"], db(below), 0, f"{name}: switch {j} SNR below", 1e-6)
        close(t["snr_above_db"], db(above), 0, f"{name}: switch {j} SNR above", 1e-4)
        close(t["dip_db"], db(below) - db(above), 0, f"{name}: switch {j} dip", 1e-4)
        if beta == 0 and not same:
            mc_dip(name, j, a, b, x, t, sc, rng)
    x0 = report["signal_e"]
    # The combined SNR at the scenario's light: the readout in use, by the stitch.
    use = len(rs) - 1
    for j in range(len(rs) - 1):
        if x0 <= f * rs[j]["capacity"] * rs[j]["scale"]:
            use = j
            break
    xs = f * rs[use]["capacity"] * rs[use]["scale"] if use < len(rs) - 1 else None
    if beta > 0 and xs is not None and x0 > (1 - beta) * xs:
        w = (x0 - (1 - beta) * xs) / (xs - (1 - beta) * xs)
        want = snr_blend(rs[use], rs[use + 1], x0, w, same, True)
    else:
        want = snr_alone(rs[use], x0, True)
    check(h["readout_in_use"] == use, f"{name}: readout in use {h['readout_in_use']} vs {use}")
    close(h["snr"]["total"], want, 1e-9, f"{name}: combined total SNR at the light")
    # Dynamic range: the last readout's top over the first one's temporal threshold, the positive
    # root of S² − k²S − k²σ0² = 0 (SCENARIO.md, N = 1).
    k = sc.get("snr_threshold", 1.0)
    sigma0 = rs[0]["dark"] + rs[0]["other"]
    min_t = (k * k + math.sqrt(k**4 + 4 * k * k * sigma0)) / 2
    top = rs[-1]["capacity"] * rs[-1]["scale"]
    close(h["dynamic_range"]["ratio"], top / min_t, 1e-9, f"{name}: combined dynamic range")


def mc_dip(name, j, a, b, x, t, sc, rng):
    """Sample the pixel on both sides of a hard switch: Poisson charge (signal + dark), Gaussian
    read noise, the ADC's rounding to whole DN (temporal only: one pixel, many frames)."""
    s = sc["sensor"]
    n = 2_000_000
    gain = s["system_gain_dn_per_e"]
    read = [s["read_noise_e"]] + [e.get("read_noise_e", s["read_noise_e"]) for e in sc["hdr"]["exposures"]]

    def sample_snr(r, idx, level):
        S = level / r["scale"]
        charge = rng.poisson(S + r["dark"], n) + rng.normal(0, read[idx], n)
        dn = np.round(charge * gain)
        y = dn / gain - r["dark"]
        return y.mean() / y.std()

    below = sample_snr(a, j, x * (1 - 1e-9))
    above = sample_snr(b, j + 1, x * (1 + 1e-9))
    # The standard error of a sample SNR from n draws is about √((1 + SNR²/2)/n) (delta
    # method), i.e. 20·log10(e)·√((1/SNR² + 1/2)/n) dB; 5 of them per side.
    se = lambda snr: 8.686 * math.sqrt((1 / snr**2 + 0.5) / n)  # noqa: E731
    tol = 5 * math.hypot(se(below), se(above))
    got = db(below) - db(above)
    check(abs(got - t["dip_db"]) <= tol, f"{name}: switch {j} sampled dip {got:.4f} vs {t['dip_db']:.4f} ± {tol:.4f} dB")


# ---- colour: numpy applies the processing to sampled raw noise -----------------------------


def check_colour(name, sc, report, rng):
    ch = {c["name"]: c for c in report["channels"]}
    proc = sc.get("processing", {})
    wb = np.array(proc.get("white_balance", [1.0, 1.0, 1.0]))
    m = np.array(proc.get("colour_matrix", np.eye(3).tolist()))
    rho = proc.get("channel_correlation", 0.0)
    n = 1_000_000
    means = np.array([ch["R"]["signal_e"], ch["G"]["signal_e"], ch["B"]["signal_e"]])
    sd = {c: ch[c]["noise_e"]["total"] for c in "RGB"}
    if rho == 0:
        # The quad: R, Gr, Gb, B independent; the output's G is the mean of the two greens.
        r = rng.normal(means[0], sd["R"], n)
        g = (rng.normal(means[1], sd["G"], n) + rng.normal(means[1], sd["G"], n)) / 2
        b = rng.normal(means[2], sd["B"], n)
        raw = np.stack([r, g, b])
    else:
        s = np.array([sd["R"], sd["G"] / math.sqrt(2), sd["B"]])
        cov = rho * np.outer(s, s)
        np.fill_diagonal(cov, s**2)
        raw = rng.multivariate_normal(means, cov, n).T
    out = m @ (wb[:, None] * raw)
    y = BT709 @ out
    for i, c in enumerate("RGB"):
        o = report["colour"]["outputs"][i]
        mu, sigma = out[i].mean(), out[i].std()
        # Standard errors of a sample mean and a sample standard deviation: σ/√n, σ/√(2n).
        check(abs(mu - o["signal_e"]) <= 5 * sigma / math.sqrt(n) + 1e-9, f"{name}: output {c} mean {mu} vs {o['signal_e']}")
        check(abs(sigma - o["noise_e_total"]) <= 5 * sigma / math.sqrt(2 * n), f"{name}: output {c} noise {sigma} vs {o['noise_e_total']}")
        # The noise gain (temporal): the matrix's row against the white-balanced channel, from
        # the covariance numpy builds itself.
        s = np.array([ch["R"]["noise_e"]["temporal"], ch["G"]["noise_e"]["temporal"] / math.sqrt(2), ch["B"]["noise_e"]["temporal"]])
        cov = rho * np.outer(s, s)
        np.fill_diagonal(cov, s**2)
        a = m * wb[None, :]
        gain = math.sqrt(a[i] @ cov @ a[i]) / (wb[i] * s[i])
        close(o["noise_gain"], gain, 1e-9, f"{name}: output {c} noise gain")
    lum = report["colour"]["luminance"]
    check(abs(y.mean() - lum["signal_e"]) <= 5 * y.std() / math.sqrt(n), f"{name}: luminance mean")
    check(abs(y.std() - lum["noise_e_total"]) <= 5 * y.std() / math.sqrt(2 * n), f"{name}: luminance noise {y.std()} vs {lum['noise_e_total']}")


def main():
    rng = np.random.default_rng(20261202)
    scenarios = {}
    for path in sorted((ROOT / "www" / "demos").glob("*.json")):
        scenario = json.loads(path.read_text())
        if scenario["sensor"].get("cfa", "mono") != "mono" or "hdr" in scenario:
            scenarios[path.stem] = scenario
    base = scenarios["automotive-hdr-colour"]
    # Variants: a blend, a dual gain (with its own well and read noise), and the hard switch
    # at saturation.
    blend = copy.deepcopy(base)
    blend["hdr"]["blend_fraction"] = 0.3
    scenarios["automotive, blended"] = blend
    dual = copy.deepcopy(base)
    dual["hdr"] = {"kind": "dual_gain", "switch_fraction": 0.8, "low_gain": {
        "system_gain_dn_per_e": 0.04, "read_noise_e": 9.0, "full_well_e": 90000}}
    scenarios["automotive, dual gain"] = dual
    dual_blend = copy.deepcopy(dual)
    dual_blend["hdr"]["blend_fraction"] = 0.25
    scenarios["automotive, dual gain blended"] = dual_blend
    for name, sc in scenarios.items():
        report = tool_eval(sc)
        if "hdr" in sc:
            check_hdr(name, sc, report, rng)
        if sc["sensor"].get("cfa", "mono") != "mono":
            check_colour(name, sc, report, rng)
    print(f"colour and HDR against numpy: {passed} passed, {failed} failed")
    sys.exit(1 if failed or passed == 0 else 0)


if __name__ == "__main__":
    main()
