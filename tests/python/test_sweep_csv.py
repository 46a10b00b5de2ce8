"""`noise-budget sweep` CSV read back with Python's csv module (a general-purpose RFC 4180 reader).

For every demo scenario, sweeps exposure time (log) and temperature (linear) as CSV and as
JSON, reads the CSV with `csv.reader(strict=True)`, and checks: the header names each column
with its unit in brackets; one row per point; every numeric cell parses back with `float` to
exactly the JSON report's double (both are written by the same engine, numbers in shortest
round-trip form; CSV with Rust's `Display`, JSON with serde_json's `float_roundtrip`); an empty
cell exactly where the report has `null`; `saturation.saturated` and the warning codes as in the
JSON; CRLF line ends (RFC 4180 section 2, item 1). Quoted fields (names with commas) occur in
the comparison CSV, which the page tests read with the same reader.

Run by scripts/test with the project's .venv. Prints 'N passed, M failed' as its last line and
exits non-zero when anything failed or nothing was checked.
"""

import csv
import io
import json
import os
import pathlib
import subprocess
import sys

ROOT = pathlib.Path(__file__).resolve().parents[2]

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print(f"FAIL: {what}")


def tool(*args):
    exe = os.environ.get("NOISE_BUDGET_BIN")
    cmd = [exe] if exe else ["cargo", "run", "--quiet", "--locked", "-p", "noise-budget", "--"]
    r = subprocess.run(cmd + list(args), capture_output=True, cwd=ROOT)
    if r.returncode != 0:
        raise SystemExit(f"noise-budget {' '.join(args)} failed: {r.stderr.decode()}")
    return r.stdout.decode("utf-8")


# The detection columns with their units (crate/engine/src/sweep.rs, CSV_COLUMNS).
DETECTION_COLUMNS = (
    "detection.signal_e [e-]",
    "detection.detection_probability [fraction]",
    "detection.contrast_detection_probability [fraction]",
)

# Report sections present only for colour or HDR scenarios (docs/scenario-format.md).
OPTIONAL_SECTIONS = ("channels", "colour", "hdr")


def at(report, path):
    """The value at a dot path; a list's element is named by its "name" (channels.R); a
    section the report leaves out (hdr of a single-readout scenario) is None."""
    v = report
    for k in path.split("."):
        if isinstance(v, list):
            v = next(e for e in v if e.get("name") == k)
        elif v is report and k in OPTIONAL_SECTIONS and k not in v:
            return None
        else:
            v = v[k]
    return v


def main():
    demos = sorted(p for p in (ROOT / "www" / "demos").glob("*.json"))
    check(len(demos) >= 2, f"demo scenarios found: {len(demos)}")
    for demo in demos:
        sc = json.loads(demo.read_text())
        t = sc["exposure"]["time_s"]
        temp = sc.get("temperature_c", 25.0)
        for vary, lo, hi, log in [
            ("exposure.time_s", t / 100, t * 100, True),
            ("temperature_c", temp - 10, temp + 10, False),
        ]:
            args = ["sweep", "--vary", vary, "--from", repr(lo), "--to", repr(hi), "--points", "37", str(demo)]
            if log:
                args.insert(-1, "--log")
            text = tool(*args)
            data = json.loads(tool(*args[:-1], "--format", "json", args[-1]))
            name = f"{demo.stem} {vary}"
            check(text.endswith("\r\n") and "\n" not in text.replace("\r\n", ""), f"{name}: CRLF line ends")
            rows = list(csv.reader(io.StringIO(text, newline=""), strict=True))
            header = rows[0]
            check(header[0] == f"{vary} [{data['unit']}]", f"{name}: first column {header[0]!r}")
            check(all(h.endswith("]") and " [" in h for h in header), f"{name}: units in the header")
            # The detection figures (issue 13) are columns of every sweep, read back like the rest.
            for col in DETECTION_COLUMNS:
                check(col in header, f"{name}: column {col!r}")
            check(len(rows) - 1 == len(data["points"]) == 37, f"{name}: {len(rows) - 1} rows")
            for row, point in zip(rows[1:], data["points"]):
                check(len(row) == len(header), f"{name}: row length")
                check(float(row[0]) == point["value"], f"{name}: value {row[0]} vs {point['value']}")
                report = point["report"]
                for h, cell in zip(header[1:], row[1:]):
                    key = h.split(" [")[0]
                    if key == "warnings":
                        want = " ".join(w["code"] for w in report["warnings"])
                        check(cell == want, f"{name}: warnings {cell!r} vs {want!r}")
                        continue
                    want = at(report, key)
                    if want is None:
                        check(cell == "", f"{name}: {key} empty for null, got {cell!r}")
                    elif isinstance(want, bool):
                        check(cell == str(want).lower(), f"{name}: {key} {cell!r}")
                    else:
                        check(float(cell) == want, f"{name}: {key} {cell} vs {want}")

    print(f"sweep CSV read back with Python's csv: {passed} passed, {failed} failed")
    sys.exit(1 if failed or passed == 0 else 0)


if __name__ == "__main__":
    main()
