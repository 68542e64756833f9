"""The CLI screen against scipy: first-two digits chi-square (89 df) and its p-value agree with
scipy.stats.chi2.sf to 1e-9 relative on a dozen generated ledgers, and the counts agree with an
independent reading of the digits from the decimal text in Python."""
import json
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

ROOT = Path(__file__).resolve().parents[2]
BIN = os.environ.get("DIGITDRIFT_BIN", str(ROOT / "target" / "release" / "digitdrift"))
P = np.log10(1 + 1 / np.arange(10, 100))  # Benford first-two digits (Benford 1938)


def first_two(text):
    digits = text.replace(".", "").lstrip("0")
    return int((digits + "0")[:2])


@pytest.mark.skipif(not Path(BIN).exists(), reason="release CLI missing")
@pytest.mark.parametrize("case", range(12))
def test_chi_square_p_value_matches_scipy(tmp_path, case):
    rng = np.random.default_rng(1000 + case)
    n = [40, 90, 150, 300, 500, 800, 1200, 2000, 3500, 5000, 8000, 12000][case]
    # Mix log-uniform (Benford) amounts with a growing share of evenly spread ones.
    share = case / 12
    logu = 10 ** rng.uniform(1, 4, n)
    even = rng.uniform(100, 900, n)
    amounts = np.where(rng.random(n) < share, even, logu)
    texts = [f"{a:.2f}" for a in amounts]
    f = tmp_path / "l.csv"
    f.write_text("Supplier,Amount\n" + "".join(f"S,{t}\n" for t in texts))
    out = subprocess.run([BIN, "screen", str(f), "--format", "json", "--no-calibration"], check=True, capture_output=True)
    s = json.loads(out.stdout)["suppliers"][0]["first_two"]
    counts = np.zeros(90)
    for t in texts:
        counts[first_two(t) - 10] += 1
    assert s["counts"] == counts.astype(int).tolist()
    chi = float(np.sum((counts - n * P) ** 2 / (n * P)))
    assert s["chi_square"] == pytest.approx(chi, rel=1e-9)
    ref = stats.chi2.sf(chi, 89)
    assert s["p_value"] == pytest.approx(ref, rel=1e-9, abs=1e-300)
