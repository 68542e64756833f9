"""The CLI's detection trial at share 0 against scipy: with nothing injected, the share of honest
(Benford) suppliers flagged by the uncorrected batch test lies inside the exact binomial
(Clopper-Pearson, scipy.stats.binomtest(...).proportion_ci(method="exact")) 99.9 % interval of
the count at the nominal level 1 - confidence, and the monitoring rate is not significantly above
the level plus the change detector's bound (years / run-length years, Doob's inequality).

Honest amounts: log-uniform over four decades (log10 uniform modulo 1 gives Benford digits),
truncated to cents, drawn with numpy."""
import json
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

ROOT = Path(__file__).resolve().parents[2]
BIN = os.environ.get("DIGITDRIFT_BIN", str(ROOT / "target" / "release" / "digitdrift"))


def honest_ledger(path, suppliers, n, seed):
    rng = np.random.default_rng(seed)
    days = np.datetime64("2023-01-01") + (np.arange(n) * 730 // n).astype("timedelta64[D]")
    lines = ["Supplier,Date,Amount"]
    for s in range(suppliers):
        cents = np.floor(10 ** rng.uniform(1, 5, n) * 100).astype(np.int64)
        lines += [f"S{s},{d},{c // 100}.{c % 100:02d}" for d, c in zip(days, cents)]
    path.write_text("\n".join(lines) + "\n")


@pytest.mark.skipif(not Path(BIN).exists(), reason="release CLI missing")
def test_share_zero_false_alarms_match_binomial(tmp_path):
    m = 500
    f = tmp_path / "honest.csv"
    honest_ledger(f, m, 150, 2024)
    out = subprocess.run(
        [BIN, "trial", str(f), "--share", "0", "--suppliers", "all", "--correction", "none",
         "--sims", "4000", "--replications", "1", "--format", "json"],
        check=True, capture_output=True)
    rep = json.loads(out.stdout)
    assert rep["mean_injected_suppliers"] == 0
    assert rep["mean_control_suppliers"] == m
    for lv in rep["levels"]:
        alpha = 1 - lv["confidence"]
        assert lv["sensitivity"] is None
        k = round(lv["batch"]["false_alarm_rate"] * m)
        ci = stats.binomtest(k, m, alpha).proportion_ci(confidence_level=0.999, method="exact")
        print(f"confidence {lv['confidence']}: batch {k}/{m} = {k / m:.4f}, 99.9 % interval "
              f"[{ci.low:.4f}, {ci.high:.4f}], nominal {alpha:.4f}; monitoring {lv['monitoring']['false_alarm_rate']:.4f}")
        assert ci.low <= alpha <= ci.high
        km = round(lv["monitoring"]["false_alarm_rate"] * m)
        bound = alpha + 2 / 100  # two years of invoices, 100-year run length
        assert stats.binomtest(km, m, min(bound, 1.0), alternative="greater").pvalue > 0.001
