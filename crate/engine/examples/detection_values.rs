//! Prints the engine's detection figures for a fixed set of cases as JSON on stdout, for the
//! Python cross-check `tests/python/test_detection.py` (which recomputes them with scipy and
//! numpy). An example, not part of the library: the engine itself does no I/O.

use engine::detection::contrast::{contrast_detection_probability, Patch};
use engine::detection::neyman_pearson as np;
use engine::detection::{counting, PoissonGaussian};
use serde_json::{json, Value};

/// A patch's (mean e⁻, variance e⁻²).
type MeanVariance = (f64, f64);

fn main() {
    // (dark e⁻, σ e⁻, p_fa, p_d): REFERENCES.md §8's row, the sub-electron case, and corners.
    let solves: &[(f64, f64, f64, f64)] = &[
        (0.01, 1.0, 1e-3, 0.5),
        (0.01, 1.0, 1e-3, 0.9),
        (0.01, 0.3, 1e-3, 0.5),
        (0.5, 0.2, 1e-6, 0.9),
        (5.0, 2.0, 1e-4, 0.5),
        (100.0, 3.0, 1e-3, 0.99),
        (1e4, 20.0, 1e-5, 0.5),
        (2.0, 0.0, 1e-3, 0.5),
    ];
    let solve_rows: Vec<Value> = solves
        .iter()
        .map(|&(d, s, p_fa, p_d)| {
            let t = np::threshold(d, s, p_fa);
            let tau = t.map(|t| t.threshold_e);
            let sig = tau.and_then(|tau| np::signal_for_detection(d, s, tau, p_d));
            let tau_g = np::gaussian_threshold(d, s * s, p_fa);
            let sig_g = tau_g.and_then(|t| np::gaussian_signal(d, s * s, t, p_d));
            json!({
                "dark_e": d, "sigma_e": s, "p_fa": p_fa, "p_d": p_d,
                "threshold_e": tau,
                "false_alarm_achieved": t.map(|t| t.false_alarm_probability),
                "signal_e": sig,
                "threshold_e_gaussian": tau_g,
                "signal_e_gaussian": sig_g,
            })
        })
        .collect();
    // (μ, σ, τ) survival values, including the contour regime (σ and √μ large).
    let tails: &[(f64, f64, f64)] = &[
        (0.01, 1.0, 3.0),
        (3.0, 0.25, 5.5),
        (1e4, 40.0, 10_250.0),
        (1e6, 100.0, 1_000_700.0),
        (1e6, 100.0, 999_500.0),
        (1e6, 0.5, 1_004_000.3),
        (0.0, 5e5, 2e6),
    ];
    let tail_rows: Vec<Value> = tails
        .iter()
        .map(|&(mu, s, tau)| {
            let pg = PoissonGaussian::new(mu, s);
            json!({
                "mean_e": mu, "sigma_e": s, "tau_e": tau,
                "survival": pg.map(|p| p.survival(tau)),
                "cdf": pg.map(|p| p.cdf(tau)),
                "method": pg.map(|p| format!("{:?}", p.method_at(tau))),
            })
        })
        .collect();
    // (target mean, variance), (reference mean, variance), ε.
    let pairs: &[(MeanVariance, MeanVariance, f64)] = &[
        ((110.0, 125.0), (100.0, 115.0), 0.5),
        ((3.0, 7.0), (2.0, 6.0), 0.5),
        ((50.0, 60.0), (100.0, 110.0), 0.5),
        ((1050.0, 1100.0), (1000.0, 1040.0), 0.5),
        ((12.0, 40.0), (8.0, 36.0), 0.25),
    ];
    let cdp_rows: Vec<Value> = pairs
        .iter()
        .map(|&(t, r, eps)| {
            let p = contrast_detection_probability(
                Patch {
                    mean_e: t.0,
                    variance_e2: t.1,
                },
                Patch {
                    mean_e: r.0,
                    variance_e2: r.1,
                },
                eps,
            );
            json!({"target": [t.0, t.1], "reference": [r.0, r.1], "epsilon": eps, "cdp": p})
        })
        .collect();
    let counting_rows: Vec<Value> = [0.1, 0.15, 0.2, 0.3, 0.5, 0.8]
        .iter()
        .map(|&s| json!({"sigma_e": s, "mean_e": 1.0, "figures": counting::figures(s, 1.0)}))
        .collect();
    let frame_rows: Vec<Value> = [(1e-3, 1000u64), (1e-9, 12_000_000), (1e-18, 1000)]
        .iter()
        .map(|&(p, m)| {
            json!({"p": p, "pixels": m, "frame": np::frame_false_alarm(p, m),
                   "pixel_for_frame": np::pixel_false_alarm_for_frame(p, m)})
        })
        .collect();
    let out = json!({
        "solves": solve_rows, "tails": tail_rows, "cdp": cdp_rows,
        "counting": counting_rows, "frame": frame_rows,
    });
    println!("{out}");
}
