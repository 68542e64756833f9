"""Reference checks of the digit-test battery against scipy/numpy and exact Python integers.

Runs the probe example `battery_probe` (crate/core/examples/battery_probe.rs). The binary is
taken from $BATTERY_PROBE, else $CARGO_TARGET_DIR/release/examples/, else target/release/examples/;
when none exists it is built with `cargo build --release -p digitdrift-core --example battery_probe`.

    pytest tests/reference/test_battery_reference.py
"""
import json
import math
import subprocess
from collections import Counter

import numpy as np
import pytest
from scipy import integrate, stats

from probe_examples import example_path


def _probe_path():
    return example_path("battery_probe", "BATTERY_PROBE")


PROBE = None


def probe(*args, stdin=""):
    global PROBE
    if PROBE is None:
        PROBE = _probe_path()
    out = subprocess.run([str(PROBE), *map(str, args)], input=stdin, capture_output=True, text=True, check=True)
    return out.stdout


def probe_json(*args, stdin=""):
    return json.loads(probe(*args, stdin=stdin))


def benford(first, last):
    d = np.arange(first, last + 1)
    return np.log10(1 + 1 / d)


EXPECTED = {
    "first_digit": (1, benford(1, 9)),
    "second_digit": (0, np.array([benford(10, 99).reshape(9, 10)[:, k].sum() for k in range(10)])),
    "first_two": (10, benford(10, 99)),
    "first_three": (100, benford(100, 999)),
    "last_two": (0, np.full(100, 0.01)),
}

RNG = np.random.default_rng(20260512)


def check_digit_test(t, counts, expected):
    counts = np.asarray(counts)
    n = counts.sum()
    assert t["n"] == n
    np.testing.assert_allclose(t["expected"], expected, rtol=1e-12)
    # chi-square and p-value: scipy.stats.chisquare (Pearson), df = bins - 1.
    chi, p = stats.chisquare(counts, n * expected)
    assert t["df"] == len(counts) - 1
    assert t["chi_square"] == pytest.approx(chi, rel=1e-9)
    assert t["p_value"] == pytest.approx(p, rel=1e-6, abs=1e-300)
    # KS over ordered bins: max |cumsum(observed) - cumsum(expected)| (numpy), critical 1.36/sqrt n
    # (large-sample 5 % value of the Kolmogorov distribution: scipy.stats.kstwobign.ppf(0.95) = 1.358).
    ks = np.max(np.abs(np.cumsum(counts / n) - np.cumsum(expected)))
    assert t["ks"] == pytest.approx(ks, rel=1e-9, abs=1e-15)
    assert t["ks_critical_5pct"] == pytest.approx(1.36 / math.sqrt(n))
    assert stats.kstwobign.ppf(0.95) == pytest.approx(1.36, abs=0.002)
    # MAD: mean |observed - expected| (numpy).
    assert t["mad"] == pytest.approx(np.mean(np.abs(counts / n - expected)), rel=1e-9)
    # Z with continuity correction 1/(2n) applied when smaller than |po - p| (Nigrini 2012,
    # from memory); compared with scipy's normal quantiles for the flags.
    po = counts / n
    diff = np.abs(po - expected)
    cc = 1 / (2 * n)
    z = np.where(cc < diff, diff - cc, diff) / np.sqrt(expected * (1 - expected) / n)
    np.testing.assert_allclose(t["z"], z, rtol=1e-9, atol=1e-12)
    z05, z01 = stats.norm.ppf(0.975), stats.norm.ppf(0.995)
    flags = np.where(z > z01 + 1e-3, 2, np.where(z > z05 + 1e-3, 1, 0))
    sure = (np.abs(z - z05) > 1e-3) & (np.abs(z - z01) > 1e-3)
    assert np.array_equal(np.asarray(t["flag"])[sure], flags[sure])


@pytest.mark.parametrize("test", list(EXPECTED))
@pytest.mark.parametrize("kind", ["benford", "skewed", "small"])
def test_counts_against_scipy(test, kind):
    first, exp = EXPECTED[test]
    k = len(exp)
    if kind == "benford":
        counts = RNG.multinomial(5000, exp)
    elif kind == "skewed":
        q = exp * np.linspace(0.6, 1.4, k)
        counts = RNG.multinomial(3000, q / q.sum())
    else:
        counts = RNG.multinomial(60, exp)
    t = probe_json("counts", test, stdin=json.dumps([int(c) for c in counts]))
    assert t["first_bin"] == first
    check_digit_test(t, counts, exp)


def test_benford_tables():
    # Published first-digit table (Benford 1938; Nigrini 2012 Table 5.1 -- from memory) vs
    # numpy log10(1 + 1/d), and the second-digit table 11.968 % (0) .. 8.500 % (9).
    first = [30.103, 17.609, 12.494, 9.691, 7.918, 6.695, 5.799, 5.115, 4.576]
    np.testing.assert_allclose(100 * EXPECTED["first_digit"][1], first, atol=5e-4)
    second = [11.968, 11.389, 10.882, 10.433, 10.031, 9.668, 9.337, 9.035, 8.757, 8.500]
    np.testing.assert_allclose(100 * EXPECTED["second_digit"][1], second, atol=5e-4)
    for test, (first_bin, exp) in EXPECTED.items():
        t = probe_json("counts", test, stdin=json.dumps([1] * len(exp)))
        np.testing.assert_allclose(t["expected"], exp, rtol=1e-12)


@pytest.mark.parametrize("k,n,p", [(0, 10, 0.3), (3, 10, 0.3), (60, 160, 0.01), (30, 1753, 1 / 7), (251, 1753, 1 / 7), (5, 5, 0.5), (12, 21, 0.1)])
def test_binomial_tail_against_scipy(k, n, p):
    got = float(probe("binom", k, n, p))
    want = stats.binom.sf(k - 1, n, p)  # P(X >= k)
    assert got == pytest.approx(want, rel=1e-8, abs=1e-300)


@pytest.mark.parametrize("z", [0.0, 0.5, 1.96, -2.576, 4.0, 9.0])
def test_normal_two_sided_against_scipy(z):
    assert float(probe("normal", z)) == pytest.approx(2 * stats.norm.sf(abs(z)), rel=1e-9, abs=1e-300)


def amounts_csv(values):
    return "".join(f"{v}\n" for v in values)


def first_digits_of(strings):
    return Counter(int(s.lstrip("0.")[0]) for s in strings)


def test_powers_of_two_and_fibonacci_exact():
    # Exact Python integers: first digits of 2^n (n = 1..1000) and F_1..F_1000 (Weyl
    # equidistribution of n log10 2 and n log10 phi mod 1; Binet's formula). The probe is fed
    # the leading 14 digits of each (an Amount holds at most 14 whole digits as decimal text;
    # the Rust test battery_known.rs feeds the leading 18 digits as raw integers).
    pw = [str(2 ** n) for n in range(1, 1001)]
    a, b, fib = 1, 1, []
    for _ in range(1000):
        fib.append(str(a))
        a, b = b, a + b
    for seq in (pw, fib):
        heads = [s[:14] for s in seq]
        out = probe_json("amounts", "--tests", "first,first_two", stdin=amounts_csv(heads))
        c = first_digits_of(seq)
        counts = [c[d] for d in range(1, 10)]
        assert out["first_digit"]["counts"] == counts
        check_digit_test(out["first_digit"], counts, EXPECTED["first_digit"][1])
        assert out["first_digit"]["p_value"] > 0.9
        c2 = Counter(int(s[:2]) for s in seq if len(s) >= 2)
        c2.update(int(s) * 10 for s in seq if len(s) == 1)  # one-digit numbers pad with 0
        assert out["first_two"]["counts"] == [c2[d] for d in range(10, 100)]


def test_amount_sample_against_python_digits():
    # Lognormal amounts with cents, written as decimal text; digits read from the text in Python.
    vals = np.round(RNG.lognormal(6, 1.6, 4000), 2)
    vals = vals[vals >= 10]
    text = [f"{v:.2f}" for v in vals]
    out = probe_json("amounts", "--tests", "first,second,first_two,first_three,last_two", stdin=amounts_csv(text))
    digits = [s.replace(".", "").lstrip("0") for s in text]
    for test, k in (("first_digit", 1), ("first_two", 2), ("first_three", 3)):
        first, exp = EXPECTED[test]
        c = Counter(int(d[:k].ljust(k, "0")) for d in digits)
        counts = [c[v] for v in range(first, first + len(exp))]
        assert out[test]["counts"] == counts
        check_digit_test(out[test], counts, exp)
    c = Counter(int(d[1]) if len(d) > 1 else 0 for d in digits)
    counts = [c[v] for v in range(10)]
    assert out["second_digit"]["counts"] == counts
    check_digit_test(out["second_digit"], counts, EXPECTED["second_digit"][1])
    c = Counter(int(s[-2:]) for s in text)  # cents basis, all >= 10.00
    counts = [c[v] for v in range(100)]
    assert out["last_two"]["counts"] == counts
    check_digit_test(out["last_two"], counts, EXPECTED["last_two"][1])


def test_uniform_integers_flagged():
    out = probe_json("amounts", "--tests", "first", stdin=amounts_csv(range(1, 10000)))
    f = out["first_digit"]
    assert f["counts"] == [1111] * 9
    chi, p = stats.chisquare([1111] * 9, 9999 * EXPECTED["first_digit"][1])
    assert f["p_value"] == pytest.approx(p, rel=1e-6, abs=1e-300) and p < 1e-100
    assert f["conformity"]["label"] == "nonconformity"


def test_distortion_against_quadrature():
    # Benford density on [10, 100): 1 / (x ln 10). Mean and sd by scipy.integrate.quad.
    dens = lambda x: 1 / (x * math.log(10))
    m = integrate.quad(lambda x: x * dens(x), 10, 100)[0]
    m2 = integrate.quad(lambda x: x * x * dens(x), 10, 100)[0]
    sd = math.sqrt(m2 - m * m)
    assert m == pytest.approx(39.0865, abs=1e-4)
    vals = np.round(RNG.uniform(10, 10000, 3000), 2)
    out = probe_json("amounts", "--tests", "distortion", stdin=amounts_csv(f"{v:.2f}" for v in vals))
    d = out["distortion"]
    scaled = np.array([v / 10 ** (math.floor(math.log10(v)) - 1) for v in vals])
    am = scaled.mean()
    assert d["expected_mean"] == pytest.approx(m, rel=1e-9)
    assert d["sigma"] == pytest.approx(sd, rel=1e-7)
    assert d["actual_mean"] == pytest.approx(am, rel=1e-9)
    assert d["distortion_factor_pct"] == pytest.approx(100 * (am - m) / m, rel=1e-7)
    z = (am - m) / (sd / math.sqrt(len(vals)))
    assert d["z"] == pytest.approx(z, rel=1e-6)
    assert d["p_value"] == pytest.approx(2 * stats.norm.sf(abs(z)), rel=1e-6, abs=1e-300)


def test_second_order_counts_against_numpy():
    # Differences of the sorted amounts in exact integer cents (numpy int64), zero differences
    # excluded and counted; first-two digits read from the integer text.
    cents = np.sort(RNG.integers(1000, 5_000_000, 3000))
    cents[::50] = cents[1::50]  # some repeated amounts -> zero differences
    text = [f"{c // 100}.{c % 100:02d}" for c in cents]
    out = probe_json("amounts", "--tests", "second_order", stdin=amounts_csv(text))
    so = out["second_order"]
    d = np.diff(np.sort(cents))
    zeros = int((d == 0).sum())
    d = d[d > 0]
    c = Counter(int(str(x)[:2].ljust(2, "0")) for x in d)
    counts = [c[v] for v in range(10, 100)]
    assert so["zero_differences"] == zeros
    assert so["counts"] == counts
    check_digit_test(so, counts, EXPECTED["first_two"][1])


def test_limit_cluster_binomial_against_scipy():
    vals = 10 ** RNG.uniform(1, 5, 20000)
    vals = np.concatenate([vals, RNG.uniform(4800, 4999, 150)])
    text = [f"{v:.2f}" for v in vals]
    out = probe_json("amounts", "--tests", "amounts", "--limit", "5000", stdin=amounts_csv(text))
    l = out["amount_checks"]["limits"][0]
    x = np.array([float(s) for s in text])
    lo, bl, bh = l["window_low"], l["band_low"], l["band_high"]
    count = int(((x >= lo) & (x < 5000)).sum())
    total = int(((x >= bl) & (x < bh)).sum())
    q = math.log(5000 / lo) / math.log(bh / bl)
    assert l["count"] == count
    assert l["expected_share"] == pytest.approx(q, rel=1e-9)
    assert l["p_value"] == pytest.approx(stats.binom.sf(count - 1, total, q), rel=1e-6, abs=1e-300)
    assert l["p_value"] < 1e-10


def test_summation_against_numpy():
    # Sum of amounts per first-two bin (exact integer cents in Python), shares against 1/90
    # (sum invariance of Benford data: Allaart 1997, from memory); MAD of the shares by numpy.
    cents = RNG.integers(1000, 90_000_000, 5000)
    cents[7] = 4_700_000_000  # one huge amount: 47,000,000.00 in bin 47
    text = [f"{c // 100}.{c % 100:02d}" for c in cents]
    out = probe_json("amounts", "--tests", "summation", stdin=amounts_csv(text))
    s = out["summation"]
    sums = np.zeros(90, dtype=object)
    for c in cents:
        sums[int(str(int(c))[:2]) - 10] += int(c)
    total = int(sum(int(c) for c in cents))
    shares = np.array([int(x) / total for x in sums], dtype=float)
    np.testing.assert_allclose(s["sums"], [int(x) / 100 for x in sums], rtol=1e-12)
    np.testing.assert_allclose(s["shares"], shares, rtol=1e-12)
    assert s["mad"] == pytest.approx(np.mean(np.abs(shares - 1 / 90)), rel=1e-9)
    flagged = [b for b in range(10, 100) if shares[b - 10] >= 2 / 90]
    assert [f["bin"] for f in s["flagged"]] == flagged
    f47 = next(f for f in s["flagged"] if f["bin"] == 47)
    assert f47["largest_invoice"] == 7
