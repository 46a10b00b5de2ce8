"""Detection figures of the engine (issue 13) recomputed with scipy and numpy.

Runs the engine's example `detection_values` (cargo), which prints its figures as JSON, and
checks each against an independent computation here:
- thresholds and detection signals: scipy.optimize.brentq on the exact Poisson–Gaussian sum
  Σ poisson.pmf(n, μ)·norm.sf((τ − n)/σ) (REFERENCES.md §8's recipe), and the discrete
  Poisson case by scanning poisson.sf;
- the Gaussian approximation: brentq on its defining equation (the engine uses the closed
  form, so this checks the algebra too);
- tail probabilities, including the engine's contour regime, by the same sum;
- the contrast detection probability of a pixel pair: a seeded numpy Monte Carlo of the two
  Gaussian pixel values (within 5 binomial standard errors) and scipy.integrate.quad of the
  ratio's probability conditioned on the reference pixel;
- photon-counting miscounts from norm.sf, per-frame false alarms from numpy's expm1/log1p.

Run by scripts/test with the project's .venv. Prints 'N passed, M failed' as its last line and
exits non-zero when anything failed or nothing was checked.
"""

import json
import math
import pathlib
import subprocess
import sys

import numpy as np
from scipy import integrate, optimize, stats

ROOT = pathlib.Path(__file__).resolve().parents[2]

# Both sides solve to ~1e-12 (the engine's SOLVE_REL_TOL, brentq's xtol 1e-14 here); 1e-9
# leaves room for scipy's own pmf rounding yet catches any formula difference (the Gaussian
# and exact answers differ by percent).
SOLVE_TOL = 1e-9
# scipy's poisson.pmf loses ~1e-9 relative at μ ~ 1e6–1e7 (checked against mpmath in the
# engine's unit tests), so large-mean tails are compared to 1e-7; small means to 1e-11.
TAIL_TOL_LARGE = 1e-7
TAIL_TOL_SMALL = 1e-11
# Monte Carlo: 5 binomial standard errors (false failure ~6e-7 per comparison).
MC_SIGMAS = 5.0
MC_DRAWS = 4_000_000
# quad on a smooth integrand, epsabs 1e-13: the engine's bound is 1e-18, so 1e-10.
QUAD_TOL = 1e-10

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL:", what)


def close(got, want, tol, what):
    scale = max(abs(want), 1.0)
    check(got is not None and abs(got - want) <= tol * scale, f"{what}: engine {got!r}, scipy {want!r}")


def rel_close(got, want, tol, what):
    check(got is not None and abs(got / want - 1.0) <= tol, f"{what}: engine {got!r}, reference {want!r}")


def survival(tau, mu, sigma):
    """P(N + R > τ) for N ~ Poisson(μ), R ~ Normal(0, σ²), by the exact sum."""
    if sigma == 0.0:
        return float(stats.poisson.sf(math.floor(tau), mu))
    if mu == 0.0:
        return float(stats.norm.sf(tau / sigma))
    half = 14.0 * math.sqrt(mu) + 60.0
    n = np.arange(max(0, math.floor(mu - half)), math.ceil(mu + half) + 1)
    return float(np.sum(stats.poisson.pmf(n, mu) * stats.norm.sf((tau - n) / sigma)))


def engine_values():
    out = subprocess.run(
        ["cargo", "run", "--quiet", "--locked", "-p", "noise-budget-engine", "--example", "detection_values"],
        cwd=ROOT, capture_output=True, text=True, check=True,
    )
    return json.loads(out.stdout)


def check_solves(rows):
    for r in rows:
        d, s, p_fa, p_d = r["dark_e"], r["sigma_e"], r["p_fa"], r["p_d"]
        name = f"d {d} σ {s} p_fa {p_fa} p_d {p_d}"
        if s == 0.0:
            k = 0
            while stats.poisson.sf(k, d) > p_fa:
                k += 1
            close(r["threshold_e"], float(k), 0.0, f"{name}: discrete τ")
            rel_close(r["false_alarm_achieved"], float(stats.poisson.sf(k, d)), 1e-12, f"{name}: achieved P_FA")
            sig = optimize.brentq(lambda x: stats.poisson.sf(k, x + d) - p_d, 0.0, 100.0 + 10 * k, xtol=1e-14, rtol=1e-15)
            close(r["signal_e"], sig, SOLVE_TOL, f"{name}: signal")
        else:
            sd = math.sqrt(d + s * s)
            lo, hi = -12.0 * s - 1.0, d + 40.0 * sd + 60.0
            tau = optimize.brentq(lambda t: survival(t, d, s) - p_fa, lo, hi, xtol=1e-14, rtol=1e-15)
            close(r["threshold_e"], tau, SOLVE_TOL, f"{name}: τ")
            rel_close(r["false_alarm_achieved"], p_fa, 1e-9, f"{name}: P_FA at τ")
            top = 60.0 * sd + 100.0 + tau
            sig = optimize.brentq(lambda x: survival(tau, x + d, s) - p_d, 0.0, top, xtol=1e-14, rtol=1e-15)
            close(r["signal_e"], sig, SOLVE_TOL, f"{name}: signal")
        var = s * s
        tau_g = d + stats.norm.isf(p_fa) * math.sqrt(var + d)
        close(r["threshold_e_gaussian"], tau_g, 1e-12, f"{name}: τ Gauss")
        z_d = stats.norm.ppf(p_d)
        g = lambda x: (x + d - tau_g) / math.sqrt(var + x + d) - z_d
        if g(0.0) >= 0:
            sig_g = 0.0
        else:
            sig_g = optimize.brentq(g, 0.0, tau_g + 100.0 * (1 + abs(z_d)) ** 2 + 1e3, xtol=1e-14, rtol=1e-15)
        close(r["signal_e_gaussian"], sig_g, SOLVE_TOL, f"{name}: signal Gauss")


def check_tails(rows):
    for r in rows:
        mu, s, tau = r["mean_e"], r["sigma_e"], r["tau_e"]
        want = survival(tau, mu, s)
        tol = TAIL_TOL_LARGE if mu >= 1e4 else TAIL_TOL_SMALL
        name = f"μ {mu} σ {s} τ {tau} ({r['method']})"
        rel_close(r["survival"], want, tol, f"{name}: P(x > τ)")
        check(abs(r["survival"] + r["cdf"] - 1.0) < 1e-12, f"{name}: S + F = 1")


def cdp_by_quad(t, r, eps):
    (m1, v1), (m2, v2) = t, r
    s1, s2 = math.sqrt(v1), math.sqrt(v2)
    c = (m1 - m2) / m2
    w_lo, w_hi = 1 + c - eps * abs(c), 1 + c + eps * abs(c)

    def inner(x2):
        a = stats.norm.cdf((w_hi * x2 - m1) / s1) - stats.norm.cdf((w_lo * x2 - m1) / s1)
        return abs(a) * stats.norm.pdf(x2, m2, s2)

    # ±40 standard deviations of the reference pixel hold all but e^-800 of its mass; split
    # at 0, where the event's form changes, so quad sees a smooth integrand on each piece.
    lo, hi = m2 - 40 * s2, m2 + 40 * s2
    edges = [lo, 0.0, hi] if lo < 0.0 < hi else [lo, hi]
    total = 0.0
    for a, b in zip(edges, edges[1:]):
        mid = min(max(m2, a), b)
        part, _ = integrate.quad(inner, a, b, epsabs=1e-13, epsrel=1e-12, limit=400, points=[mid])
        total += part
    return total


def check_cdp(rows):
    rng = np.random.default_rng(2018)
    for r in rows:
        (m1, v1), (m2, v2), eps = r["target"], r["reference"], r["epsilon"]
        c = (m1 - m2) / m2
        x1 = rng.normal(m1, math.sqrt(v1), MC_DRAWS)
        x2 = rng.normal(m2, math.sqrt(v2), MC_DRAWS)
        mc = float(np.mean(np.abs((x1 - x2) / x2 - c) <= eps * abs(c)))
        p = r["cdp"]
        se = math.sqrt(max(p * (1 - p), 1e-12) / MC_DRAWS)
        name = f"CDP target {r['target']} reference {r['reference']} ε {eps}"
        check(p is not None and abs(mc - p) <= MC_SIGMAS * se, f"{name}: engine {p}, numpy Monte Carlo {mc} (5σ = {MC_SIGMAS * se:.2e})")
        close(p, cdp_by_quad(r["target"], r["reference"], eps), QUAD_TOL, f"{name}: quad")


def check_counting(rows):
    for r in rows:
        s, h = r["sigma_e"], r["mean_e"]
        q = float(stats.norm.sf(0.5 / s))
        f = r["figures"]
        rel_close(f["miscount_interior"], 2 * q, 1e-13, f"σ {s}: interior")
        rel_close(f["miscount_zero"], q, 1e-13, f"σ {s}: level 0")
        rel_close(f["miscount_average"], 2 * q - math.exp(-h) * q, 1e-13, f"σ {s}: average")
        want = "accurate_counting" if s < 0.15 else "photon_number_resolving" if s < 0.3 else "deep_sub_electron" if s < 0.5 else "not_resolving"
        check(f["verdict"] == want, f"σ {s}: verdict {f['verdict']} vs {want}")


def check_frame(rows):
    for r in rows:
        p, m = r["p"], r["pixels"]
        rel_close(r["frame"], float(-np.expm1(m * np.log1p(-p))), 1e-13, f"frame p {p} M {m}")
        rel_close(r["pixel_for_frame"], float(-np.expm1(np.log1p(-p) / m)), 1e-13, f"pixel for frame p {p} M {m}")


def main():
    v = engine_values()
    check_solves(v["solves"])
    check_tails(v["tails"])
    check_cdp(v["cdp"])
    check_counting(v["counting"])
    check_frame(v["frame"])
    print(f"{passed} passed, {failed} failed")
    sys.exit(1 if failed or not passed else 0)


if __name__ == "__main__":
    main()
