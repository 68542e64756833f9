"""The CLI's detection trial at share 0 against scipy: with nothing injected, the share of honest
(Benford) suppliers flagged by the uncorrected batch test lies inside the exact binomial
(Clopper-Pearson, scipy.stats.binomtest(...).proportion_ci(method="exact")) 99.9 % interval of
the count at the nominal level 1 - confidence, and the monitoring rate is not significantly above
the level plus the change detector's bound (years / run-length years, Doob's inequality).

Honest amounts: log-uniform over four decades (log10 uniform modulo 1 gives Benford digits),
truncated to cents, drawn with numpy.

The Monte Carlo error of the trial's medians (delay in invoices and days, amount paid before the
alarm) is the distribution-free order-statistic interval [X_(r), X_(s)] for a median (Conover,
Practical Nonparametric Statistics, 3rd ed., section 3.2): r - 1 is the largest k with
P(Y <= k) <= 0.025 for Y ~ Binomial(m, 1/2), s = m + 1 - r. Checked against scipy.stats.binom
(ppf and cdf) for many m, through the probe `trial_probe` (crate/core/examples/trial_probe.rs)
and through the CLI's JSON; its coverage is checked by simulation with numpy. The trial's
results file (`--out`) is checked for its marking and against the JSON."""
import json
import os
import subprocess
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from probe_examples import example_path

ROOT = Path(__file__).resolve().parents[2]
BIN = os.environ.get("DIGITDRIFT_BIN", str(ROOT / "target" / "release" / "digitdrift"))


def _probe_path():
    return example_path("trial_probe", "TRIAL_PROBE")


def median_ranks(*ms):
    out = subprocess.run([str(_probe_path()), "median-ranks", *map(str, ms)], check=True, capture_output=True, text=True)
    return [json.loads(line) for line in out.stdout.splitlines()]


def scipy_ranks(m):
    """r, s and coverage of the 95 % median interval by scipy.stats.binom (None below 6)."""
    if m < 6:
        return None
    # ppf(q) is the smallest k with cdf(k) >= q; cdf never equals 1/40 exactly (it is a
    # multiple of 2^-m), so cdf(ppf - 1) <= 0.025 < cdf(ppf) and r = ppf.
    r = int(stats.binom.ppf(0.025, m, 0.5))
    assert stats.binom.cdf(r - 1, m, 0.5) <= 0.025 < stats.binom.cdf(r, m, 0.5)
    s = m + 1 - r
    # s by its own rule: the smallest s with P(Y <= s - 1) >= 0.975.
    assert stats.binom.cdf(s - 1, m, 0.5) >= 0.975 > stats.binom.cdf(s - 2, m, 0.5)
    return r, s, stats.binom.cdf(s - 1, m, 0.5) - stats.binom.cdf(r - 1, m, 0.5)


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


MS = list(range(1, 201)) + [255, 256, 257, 499, 500, 1000, 1001, 2500, 4321, 10007, 20000, 54321]


def test_median_interval_ranks_match_scipy_binomial():
    got = median_ranks(*MS)
    for g in got:
        m = g["m"]
        want = scipy_ranks(m)
        if want is None:
            assert g["r"] is None and g["s"] is None, g
            continue
        r, s, cov = want
        assert (g["r"], g["s"]) == (r, s), (g, want)
        assert abs(g["coverage"] - cov) < 1e-9, (g, cov)
        assert g["coverage"] >= 0.95
        if g["r_exact"] is not None:
            assert g["r_exact"] == r


@pytest.mark.parametrize("m", [7, 20, 75, 300])
def test_median_interval_covers_by_simulation(m):
    """numpy: the interval [X_(r), X_(s)] from the core's ranks covers the true median of a
    continuous distribution (exponential, median ln 2) at its stated coverage, and of a discrete
    one with ties (geometric, like delays counted in invoices) at least 95 %."""
    (g,) = median_ranks(m)
    r, s, cov = g["r"], g["s"], g["coverage"]
    rng = np.random.default_rng(m)
    trials = 20_000
    se = (cov * (1 - cov) / trials) ** 0.5
    x = np.sort(rng.exponential(1.0, (trials, m)), axis=1)
    hit = np.mean((x[:, r - 1] <= np.log(2)) & (np.log(2) <= x[:, s - 1]))
    print(f"m={m}: ranks {r}, {s}; stated coverage {cov:.4f}, simulated {hit:.4f} (exponential)")
    assert abs(hit - cov) <= 4 * se
    # Geometric(p = 0.1) on 1, 2, ...: median = ceil(ln 0.5 / ln 0.9) = 7 (scipy.stats.geom.median).
    med = stats.geom.median(0.1)
    y = np.sort(rng.geometric(0.1, (trials, m)), axis=1)
    hit_d = np.mean((y[:, r - 1] <= med) & (med <= y[:, s - 1]))
    print(f"m={m}: geometric median {med}, simulated coverage {hit_d:.4f}")
    assert hit_d >= 0.95 - 4 * (0.05 * 0.95 / trials) ** 0.5


@pytest.mark.skipif(not Path(BIN).exists(), reason="release CLI missing")
def test_trial_medians_carry_their_interval_and_results_file_is_marked(tmp_path):
    f = tmp_path / "honest.csv"
    honest_ledger(f, 40, 400, 7)
    out_csv, out_json = tmp_path / "trial-results.csv", tmp_path / "trial-results.json"
    args = [BIN, "trial", str(f), "--share", "0.15", "--range", "100;900", "--suppliers", "all",
            "--sims", "1000", "--replications", "4", "--seed", "3", "--format", "json"]
    rep = json.loads(subprocess.run(args + ["--out", str(out_csv)], check=True, capture_output=True).stdout)
    subprocess.run(args + ["--out", str(out_json)], check=True, capture_output=True)
    checked = 0
    for lv in rep["levels"]:
        for part in (lv, lv["monitoring"]):
            for key in ("median_delay_invoices", "median_delay_days", "paid_before_detection"):
                iv = part.get(key + "_interval")
                if iv is None:
                    continue
                want = scipy_ranks(iv["observations"])
                assert (iv["rank_low"], iv["rank_high"]) == want[:2]
                assert abs(iv["coverage"] - want[2]) < 1e-9
                assert iv["low"] <= part[key] <= iv["high"]
                checked += 1
    assert checked >= 6
    text = out_csv.read_text(encoding="utf-8")
    first = text.split("\r\n")[0]
    assert first.startswith("# digitdrift DETECTION TRIAL on invented invoices")
    assert "seed 3" in first and "4 replications" in first and "share 0.15" in first
    assert "not proof" in text
    import csv as csvmod
    rows = list(csvmod.reader(text.splitlines()))
    header = next(i for i, r in enumerate(rows) if r and r[0] == "record")
    data = [dict(zip(rows[header], r)) for r in rows[header + 1:]]
    assert all(d["record"] == "trial (invented invoices)" for d in data)
    for lv in rep["levels"]:
        d = next(d for d in data if abs(float(d["confidence"]) - lv["confidence"]) < 1e-9 and d["detection"] == "screen_or_monitor")
        assert abs(float(d["sensitivity"]) - lv["sensitivity"]) < 1e-6
        if lv["median_delay_invoices_interval"]:
            assert float(d["median_delay_invoices_low"]) == lv["median_delay_invoices_interval"]["low"]
            assert float(d["median_delay_invoices_high"]) == lv["median_delay_invoices_interval"]["high"]
    j = json.loads(out_json.read_text(encoding="utf-8"))
    assert list(j)[0] == "notice" and j["notice"].startswith("digitdrift DETECTION TRIAL on invented invoices")
    assert j["trial"]["levels"] == rep["levels"]
