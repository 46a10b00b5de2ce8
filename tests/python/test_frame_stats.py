"""Frame statistics of `noise-budget characterize` compared with numpy computing the same.

numpy draws a camera's frames (Poisson photo-electrons, Gaussian read noise, fixed seed; the
camera is this script's invented truth), writes them as 16-bit PGM, 16-bit PNG (written here
with zlib) and raw little-endian files with a manifest, runs the command, and checks every
stack's mean, temporal variance (1/(2NM) pair-difference form) and spatial variance (average of
L frames, σ²/L removed), and then the gain line, against numpy's own computation from the same
pixels (EMVA 1288 Release 4.0 Linear items 10 and 11 as in REFERENCES.md §4, from memory).
Also checks the command's exit status on a broken frame and an invalid manifest.

Run by scripts/test with the project's .venv. Prints 'N passed, M failed' as its last line and
exits non-zero when anything failed or nothing was checked.
"""

import json
import os
import pathlib
import struct
import subprocess
import sys
import tempfile
import zlib

import numpy as np

ROOT = pathlib.Path(__file__).resolve().parents[2]

# Both sides form each statistic from the same integers; the engine exactly (integer sums,
# one division), numpy in float64 (two-pass variance over ≤ 1e5 values). Their difference is a
# few float64 roundings, relative ~1e-15; 1e-9 leaves a wide margin while catching any real
# formula difference (such as 1/(2NM) against 1/(2(NM − 1)), relative 1e-4 here).
REL_TOL = 1e-9

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL:", what)


def close(got, want, what):
    scale = max(abs(want), 1e-6)
    check(abs(got - want) <= REL_TOL * scale, f"{what}: engine {got!r}, numpy {want!r}")


# ---- writing frames -----------------------------------------------------------------------

def write_pgm16(path, img, maxval=65535):
    h, w = img.shape
    path.write_bytes(f"P5\n{w} {h}\n{maxval}\n".encode() + img.astype(">u2").tobytes())


def write_raw16(path, img):
    path.write_bytes(img.astype("<u2").tobytes())


def write_png16(path, img):
    """A greyscale 16-bit PNG: IHDR, one zlib IDAT with filter type 0 per row, IEND."""
    h, w = img.shape

    def chunk(kind, data):
        body = kind + data
        return struct.pack(">I", len(data)) + body + struct.pack(">I", zlib.crc32(body) & 0xFFFFFFFF)

    rows = img.astype(">u2").tobytes()
    stride = 2 * w
    raw = b"".join(b"\x00" + rows[i * stride:(i + 1) * stride] for i in range(h))
    ihdr = struct.pack(">IIBBBBB", w, h, 16, 0, 0, 0, 0)
    path.write_bytes(
        b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(raw)) + chunk(b"IEND", b"")
    )


# ---- the invented camera (this script's chosen truth) ------------------------------------

WIDTH, HEIGHT = 160, 96  # not square, so a transposed reading would show
GAIN = 0.4  # DN/e-
READ_E = 4.0
OFFSET = 40000  # a large 16-bit offset: lost precision would show
PRNU = 0.01
DSNU_E = 3.0
rng = np.random.default_rng(20261201)
prnu_map = 1.0 + PRNU * rng.standard_normal((HEIGHT, WIDTH))
dsnu_map = DSNU_E * rng.standard_normal((HEIGHT, WIDTH))


def frame(electrons):
    photo = rng.poisson(electrons * prnu_map) if electrons > 0 else 0.0
    e = photo + dsnu_map + READ_E * rng.standard_normal((HEIGHT, WIDTH))
    return np.clip(np.round(OFFSET + GAIN * e), 0, 65535).astype(np.uint16)


def numpy_stats(frames):
    """Mean, pair-difference temporal variance and corrected spatial variance (EMVA items 10, 11)."""
    stack = np.stack([f.astype(np.int64) for f in frames])
    L = len(frames)
    mean = stack.sum() / stack.size
    pair_vars = [np.var(stack[i] - stack[i + 1]) / 2.0 for i in range(0, L - 1, 2)]
    temporal = float(np.mean(pair_vars))
    spatial_raw = float(np.var(stack.sum(axis=0) / L, ddof=1))
    return float(mean), temporal, spatial_raw - temporal / L


def run(manifest, *extra):
    exe = os.environ.get("NOISE_BUDGET_BIN")
    cmd = [exe] if exe else ["cargo", "run", "--quiet", "--locked", "-p", "noise-budget", "--"]
    return subprocess.run(cmd + ["characterize", *extra, str(manifest)], capture_output=True, text=True, cwd=ROOT)


# ---- the spatial part: row/column/pixel split, spectrograms, histograms, defects ----------

def anova_split(img, temporal, L):
    """Row, column and pixel variances of an averaged image by two-way ANOVA without
    replication, from the residual matrix itself (not the engine's closed form): q² = Σ(y −
    row mean − column mean + mean)² / ((M − 1)(N − 1)), s²_row = var(row means) − q²/N,
    s²_col = var(column means) − q²/M, s²_pix = q² − σ²/L."""
    M, N = img.shape
    rm, cm, mu = img.mean(axis=1), img.mean(axis=0), img.mean()
    resid = img - rm[:, None] - cm[None, :] + mu
    q2 = float((resid ** 2).sum() / ((M - 1) * (N - 1)))
    return {
        "row_dn2": float(np.var(rm, ddof=1)) - q2 / N,
        "column_dn2": float(np.var(cm, ddof=1)) - q2 / M,
        "pixel_dn2": q2 - temporal / L,
    }


def spectrogram(img, axis):
    """Mean over lines (all of them here: fewer than 512) of |numpy.fft.fft|²/P of the first P
    = 2^⌊log2 n⌋ values of each line less the image mean; bins 0 … P/2."""
    lines = img if axis == 1 else img.T
    P = 1 << (lines.shape[1].bit_length() - 1)
    x = lines[:, :P] - img.mean()
    return (np.abs(np.fft.fft(x, axis=1)) ** 2).mean(axis=0)[: P // 2 + 1] / P


def histogram_counts(S):
    """The engine's bins over the per-pixel sums S: bin = (S − lo)·B // (hi − lo + 1)."""
    lo, hi = int(S.min()), int(S.max())
    width = hi - lo + 1
    bins = min(128, width)
    return np.bincount(((S.astype(np.int64) - lo) * bins // width).ravel(), minlength=bins)


def read_csv(path):
    import csv
    series = {}
    with open(path, newline="") as f:
        for row in csv.DictReader(f):
            key = (row["channel"], row["image"], row["series"])
            series.setdefault(key, []).append((float(row["x"]), float(row["value"])))
    return series


def spatial_checks(tmp):
    W, H, L = 128, 80, 16
    g = np.random.default_rng(20261202)
    rows = 1.5 * g.standard_normal(H)[:, None]  # e-, invented
    cols = 1.0 * g.standard_normal(W)[None, :]
    dsnu = 2.0 * g.standard_normal((H, W))
    prnu = 1.0 + 0.01 * g.standard_normal((H, W))
    read = np.full((H, W), 3.0)
    hot = [(3, 5), (40, 77), (70, 120)]
    dead = [(10, 10), (60, 31)]
    noisy = [(20, 20), (50, 90), (79, 127), (0, 64)]
    for y, x in hot:
        dsnu[y, x] += 300.0
    for y, x in dead:
        prnu[y, x] = 0.0
    for y, x in noisy:
        read[y, x] = 30.0
    K, offset = 0.5, 1000.3

    def frame(e):
        photo = g.poisson(e * prnu) if e > 0 else 0.0
        v = offset + K * (photo + dsnu + rows + cols + read * g.standard_normal((H, W)))
        return np.clip(np.round(v), 0, 65535).astype(np.uint16)

    plan = [("dark", "d", 0.0, L), ("flat", "a", 2000.0, 2), ("flat", "b", 5000.0, L), ("flat", "c", 10000.0, 2)]
    entries, stacks = [], {}
    for kind, level, e, n in plan:
        fr = [frame(e) for _ in range(n)]
        stacks[level] = np.stack([f.astype(np.int64) for f in fr])
        for j, f in enumerate(fr):
            name = f"sp_{level}{j}.pgm"
            write_pgm16(tmp / name, f)
            entries.append({"path": name, "kind": kind, "exposure_time_s": 0.01, "level": level})
    manifest = tmp / "spatial.json"
    manifest.write_text(json.dumps({"version": 1, "frames": entries}))
    csv_path = tmp / "spatial.csv"
    r = run(manifest, "--spatial-csv", str(csv_path))
    check(r.returncode == 0, f"spatial: exit status {r.returncode}: {r.stderr}")
    if r.returncode != 0:
        return
    out = json.loads(r.stdout)
    sp = out["fit"]["spatial"]
    series = read_csv(csv_path)

    def temporal(st):
        return float(np.mean([np.var(st[i] - st[i + 1]) / 2.0 for i in range(0, len(st) - 1, 2)]))

    for level, image in [("d", "dark"), ("b", "flat")]:
        st = stacks[level]
        avg = st.sum(axis=0) / len(st)
        t = temporal(st)
        want = anova_split(avg, t, len(st))
        got = sp[f"{image}_split_dn2"]
        for part in want:
            close(got[part], want[part], f"{image} {part} (ANOVA)")
        for axis, name in [(1, "horizontal_spectrogram"), (0, "vertical_spectrogram")]:
            ours = np.array([v for _, v in series[("all", image, name)]])
            ref = spectrogram(avg, axis)
            check(len(ours) == len(ref), f"{image} {name}: {len(ours)} bins, numpy {len(ref)}")
            if len(ours) == len(ref):
                err = float(np.max(np.abs(ours - ref) / np.maximum(np.abs(ref), 1e-9)))
                # FFT roundings of a 128-point transform in float64: relative ~1e-13.
                check(err < 1e-9, f"{image} {name}: max relative difference {err}")
        prof = np.array([v for _, v in series[("all", image, "row_profile")]])
        close(float(np.abs(prof - avg.mean(axis=1)).max()) + 1.0, 1.0, f"{image} row profile")
        counts = np.array([v for _, v in series[("all", image, "histogram")]])
        check(np.array_equal(counts, histogram_counts(st.sum(axis=0))), f"{image} histogram counts")
    # Defects: beyond 6 standard deviations (ddof 1) of the averaged image from its mean.
    dark = stacks["d"].sum(axis=0) / L
    flat = stacks["b"].sum(axis=0) / L
    hot_n = int((dark - dark.mean() > 6 * dark.std(ddof=1)).sum())
    dead_n = int((flat - flat.mean() < -6 * flat.std(ddof=1)).sum())
    check(sp["hot_pixels"] == hot_n == len(hot), f"hot pixels: engine {sp['hot_pixels']}, numpy {hot_n}, planted {len(hot)}")
    check(sp["dark_pixels"] == dead_n == len(dead), f"dark pixels: engine {sp['dark_pixels']}, numpy {dead_n}, planted {len(dead)}")
    # High-noise: each pixel's Σ over pairs of (a − b)², over 2P, above 10 × σ²_dark.
    st = stacks["d"]
    d2 = sum((st[i] - st[i + 1]) ** 2 for i in range(0, L, 2)) / (2 * (L // 2))
    noisy_n = int((d2 > 10 * temporal(st)).sum())
    check(sp["high_noise_pixels"] == noisy_n == len(noisy), f"high-noise pixels: engine {sp['high_noise_pixels']}, numpy {noisy_n}, planted {len(noisy)}")
    # The figures list has the uncertainties the table prints.
    figs = {f["key"]: f for f in out["figures"]}
    check(figs["dsnu_e"]["uncertainty"] is not None and figs["prnu_percent"]["uncertainty"] is not None, "DSNU/PRNU uncertainties in the figures")


def colour_checks(tmp):
    """An RGGB sensor, 12-bit samples at the top of 16-bit PNGs: each channel's points equal
    numpy's statistics of that channel's sub-image in the camera's DN (container DN / 16)."""
    W, H = 96, 64
    g = np.random.default_rng(20261203)
    resp = np.ones((H, W))
    resp[0::2, 0::2], resp[1::2, 1::2] = 0.55, 0.40  # R and B against green (invented)
    gain = resp * (1.0 + 0.01 * g.standard_normal((H, W)))
    K = 0.37

    def frame(e):
        photo = g.poisson(e * gain) if e > 0 else 0.0
        v = 64.3 + K * (photo + 1.2 * g.standard_normal((H, W)))
        return (np.clip(np.round(v), 0, 4095).astype(np.uint16) << 4)

    entries, stacks = [], {}
    for kind, level, e in [("dark", "d", 0.0), ("flat", "a", 1500.0), ("flat", "b", 3500.0), ("flat", "c", 6000.0), ("flat", "e", 9000.0)]:
        fr = [frame(e) for _ in range(2)]
        stacks[level] = np.stack([f.astype(np.int64) >> 4 for f in fr])
        for j, f in enumerate(fr):
            name = f"c_{level}{j}.png"
            write_png16(tmp / name, f)
            entries.append({"path": name, "kind": kind, "exposure_time_s": 0.01, "level": level})
    manifest = tmp / "colour.json"
    manifest.write_text(json.dumps({"version": 1, "cfa": "RGGB", "frames": entries}))
    r = run(manifest)
    check(r.returncode == 0, f"colour: exit status {r.returncode}: {r.stderr}")
    if r.returncode != 0:
        return
    out = json.loads(r.stdout)
    check(out["sensor"].get("adc_bits") == 12, f"colour: adc_bits {out['sensor'].get('adc_bits')}")
    check([c["name"] for c in out["channels"]] == ["R", "Gr", "Gb", "B"], "colour: channel names")
    for ch, (y0, x0) in zip(out["channels"], [(0, 0), (0, 1), (1, 0), (1, 1)]):
        points = {p.get("level"): p for p in ch["fit"]["points"]}
        for level, st in stacks.items():
            m, t, s = numpy_stats([f[y0::2, x0::2] for f in st])
            p = points[level]
            close(p["mean_dn"], m, f"channel {ch['name']} {level} mean")
            close(p["temporal_variance_dn2"], t, f"channel {ch['name']} {level} temporal variance")
            close(p["spatial_variance_dn2"], s, f"channel {ch['name']} {level} spatial variance")


def main():
    with tempfile.TemporaryDirectory(prefix="noise-budget-frames-") as tmp:
        tmp = pathlib.Path(tmp)
        entries = []
        truth_frames = {}
        writers = [("pgm", write_pgm16), ("png", write_png16), ("raw", write_raw16)]
        # (kind, level label, electrons, frames): darks with L = 4 use the engine's per-pixel
        # path; the flats with L = 2 its pair path.
        plan = [("dark", None, 0.0, 4)] + [("flat", f"L{i}", e, 2) for i, e in enumerate([500, 2000, 5000, 9000, 14000])]
        for s, (kind, level, electrons, count) in enumerate(plan):
            frames = [frame(electrons) for _ in range(count)]
            truth_frames[(kind, level)] = frames
            for j, f in enumerate(frames):
                ext, writer = writers[(s + j) % 3]
                name = f"s{s}_{j}.{ext}"
                writer(tmp / name, f)
                e = {"path": name, "kind": kind, "exposure_time_s": 0.02}
                if level:
                    e["level"] = level
                if ext == "raw":
                    e["raw"] = {"width": WIDTH, "height": HEIGHT, "bits": 16}
                entries.append(e)
        manifest = tmp / "manifest.json"

        for roi in [None, {"x": 17, "y": 5, "width": 101, "height": 63}]:
            doc = {"version": 1, "frames": entries}
            if roi:
                doc["roi"] = roi
            manifest.write_text(json.dumps(doc))
            r = run(manifest)
            check(r.returncode == 0, f"characterize exit status {r.returncode}: {r.stderr}")
            if r.returncode != 0:
                continue
            out = json.loads(r.stdout)
            where = "whole frame" if roi is None else "roi"
            points = {(p["kind"], p.get("level")): p for p in out["fit"]["points"]}
            check(len(points) == len(plan), f"{where}: {len(points)} points for {len(plan)} stacks")
            ours = {}
            for key, frames in truth_frames.items():
                if roi:
                    frames = [f[roi["y"]:roi["y"] + roi["height"], roi["x"]:roi["x"] + roi["width"]] for f in frames]
                ours[key] = numpy_stats(frames)
                p = points.get(key)
                if p is None:
                    check(False, f"{where}: no point for {key}")
                    continue
                m, t, s = ours[key]
                close(p["mean_dn"], m, f"{where} {key} mean")
                close(p["temporal_variance_dn2"], t, f"{where} {key} temporal variance")
                close(p["spatial_variance_dn2"], s, f"{where} {key} spatial variance")
            # The gain line over the points the engine used, fitted by numpy.polyfit.
            dm, dv, _ = ours[("dark", None)]
            used = [k for k, p in points.items() if p.get("used_in_gain_fit")]
            x = np.array([ours[k][0] - dm for k in used])
            y = np.array([ours[k][1] - dv for k in used])
            slope, intercept = np.polyfit(x, y, 1)
            close(out["sensor"]["system_gain_dn_per_e"], float(slope), f"{where} K")
            close(out["fit"]["system_gain"]["line"]["intercept"], float(intercept), f"{where} intercept")
            # Read noise σ_d = √(σ²_dark − 1/12)/K (REFERENCES.md §4 item 3).
            close(out["sensor"]["read_noise_e"], float(np.sqrt(dv - 1 / 12) / slope), f"{where} read noise")
            # And the truth, loosely: K within 3 % (five levels of 15 360 pixels each carry
            # √(2/n) ≈ 1.1 % on their variances; 3 % is about 5 standard uncertainties of K).
            check(abs(out["sensor"]["system_gain_dn_per_e"] / GAIN - 1) < 0.03, f"{where} K near truth {GAIN}")

        spatial_checks(tmp)
        colour_checks(tmp)

        # A truncated frame: exit status 2 and a message naming the file.
        (tmp / "s0_0.pgm").write_bytes((tmp / "s0_0.pgm").read_bytes()[:-10])
        manifest.write_text(json.dumps({"version": 1, "frames": entries}))
        r = run(manifest)
        check(r.returncode == 2, f"truncated frame: exit status {r.returncode}")
        check("frames[0] (s0_0.pgm): truncated" in r.stderr, f"truncated frame message: {r.stderr!r}")
        # A missing file: exit status 1.
        (tmp / "s0_0.pgm").unlink()
        r = run(manifest)
        check(r.returncode == 1, f"missing frame: exit status {r.returncode}")
        # An invalid manifest: exit status 2, every problem with its key.
        manifest.write_text(json.dumps({"version": 1, "frames": [{"path": "a", "kind": "bright"}]}))
        r = run(manifest)
        check(r.returncode == 2, f"invalid manifest: exit status {r.returncode}")
        check("frames[0].kind:" in r.stderr and "frames[0].exposure_time_s:" in r.stderr, f"manifest messages: {r.stderr!r}")

    print(f"frame statistics against numpy: {passed} passed, {failed} failed")
    sys.exit(1 if failed or passed == 0 else 0)


if __name__ == "__main__":
    main()
