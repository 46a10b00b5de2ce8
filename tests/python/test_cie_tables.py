"""The CIE tables embedded in the engine, compared point by point with colour-science's.

The engine embeds crate/engine/data/*.csv at build time (build.rs), and a Rust test checks that
the embedded functions return those rows exactly; this script checks the rows against the
tables the colour-science package (PyPI) ships, so together: engine == colour-science.
Run by scripts/test with the project's .venv. Prints 'N passed, M failed' as its last line.
"""

import csv
import pathlib
import sys
import warnings

warnings.filterwarnings("ignore")  # colour-science warns that scipy/matplotlib are absent

import colour.colorimetry.datasets.lefs as lefs  # noqa: E402
from colour.colorimetry.datasets.illuminants import sds as illuminants  # noqa: E402

DATA = pathlib.Path(__file__).resolve().parents[2] / "crate" / "engine" / "data"

passed = 0
failed = 0


def check(ok, what):
    global passed, failed
    if ok:
        passed += 1
    else:
        failed += 1
        print("FAIL:", what)


def rows(name):
    with open(DATA / name, newline="") as f:
        r = csv.DictReader(f)
        return [(float(x["wavelength_nm"]), float(list(x.values())[1]), x["source"]) for x in r]


# V(λ): every 1 nm row, 360–830 nm, must equal colour-science's value exactly (same digits).
v_ref = lefs.DATA_LEFS_PHOTOPIC["CIE 1924 Photopic Standard Observer"]
v_rows = rows("cie_1924_photopic_v.csv")
check(len(v_rows) == len(v_ref) == 471, f"V(λ) has {len(v_rows)} rows, colour-science {len(v_ref)}")
for nm, v, _ in v_rows:
    ref = v_ref.get(int(nm))
    check(ref is not None and float(ref) == v, f"V({nm}) = {v}, colour-science {ref}")

# D65: 300–780 nm at 5 nm from colour-science (CIE 15:2004); 785–830 nm are from luxpy via
# REFERENCES.md, which colour-science does not carry; they are checked in tests/reference.rs.
d_ref = illuminants.DATA_ILLUMINANTS_CIE["D65"]
compared = 0
for nm, v, source in rows("cie_d65.csv"):
    if nm <= 780:
        ref = d_ref.get(int(nm))
        check(ref is not None and float(ref) == v, f"D65({nm}) = {v}, colour-science {ref}")
        compared += 1
    else:
        check("colour-science" not in source, f"D65({nm}) claims colour-science as its source")
check(compared == len(d_ref) == 97, f"compared {compared} D65 rows, colour-science has {len(d_ref)}")

# Illuminant A from its formula: the engine's formula against colour-science's implementation
# is checked through the published values in tests/reference.rs; here the formula itself.
try:
    from colour.colorimetry import sd_CIE_standard_illuminant_A
    import numpy as np

    sd = sd_CIE_standard_illuminant_A()
    lam = np.arange(360, 781, 10.0)  # the default shape of colour-science's A ends at 780 nm
    c = 1.435e7 / 2848.0
    ours = 100 * (560 / lam) ** 5 * np.expm1(c / 560) / np.expm1(c / lam)
    theirs = np.array([sd[x] for x in lam])
    check(np.max(np.abs(ours / theirs - 1)) < 1e-12, "illuminant A formula differs from colour-science")
except ImportError as e:  # pragma: no cover
    check(False, f"cannot import colour-science's illuminant A: {e}")

print(f"cie tables: {passed} passed, {failed} failed")
sys.exit(1 if failed or passed == 0 else 0)
