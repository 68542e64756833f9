"""Counts from a database: DuckDB (a general-purpose SQL engine, from PyPI) computes the digit-count
table from the demo ledger with the SQL in tests/reference/sql/first_two_counts.sql (the same SQL
the README gives); digitdrift screens that table, and its verdicts, calibrated p-values and
first-two counts must equal those of the screen of the raw file."""
import json
import os
import subprocess
from pathlib import Path

import duckdb
import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo-files" / "heathervale-vet-ledger.csv"
BIN = os.environ.get("DIGITDRIFT_BIN", str(ROOT / "target" / "release" / "digitdrift"))


def screen(path):
    out = subprocess.run([BIN, "screen", str(path), "--format", "json"], check=True, capture_output=True)
    return json.loads(out.stdout)


@pytest.mark.skipif(not DEMO.exists() or not Path(BIN).exists(), reason="demo ledger or release CLI missing")
def test_duckdb_counts_give_the_same_verdicts(tmp_path):
    sql = (ROOT / "tests/reference/sql/first_two_counts.sql").read_text().replace("{LEDGER}", str(DEMO))
    con = duckdb.connect()
    out = tmp_path / "counts.csv"
    con.execute(f"COPY ({sql.rstrip().rstrip(';')}) TO '{out}' (HEADER, DELIMITER ',')")
    raw = screen(DEMO)
    cnt = screen(out)
    by_name = {s["name"]: s for s in cnt["suppliers"]}
    assert len(by_name) == len(raw["suppliers"])
    for s in raw["suppliers"]:
        c = by_name[s["name"]]
        assert c["invoices"] == s["invoices"], s["name"]
        assert c["first_two"]["counts"] == s["first_two"]["counts"], s["name"]
        assert c["first_two"]["mc_p_value"] == s["first_two"]["mc_p_value"], s["name"]
        assert c["verdict"] == s["verdict"], s["name"]
        assert c["invoices_needed"] == s["invoices_needed"], s["name"]
        assert abs(c["amount_total"] - s["amount_total"]) < 0.005, s["name"]
        assert c["first_digit"]["counts"] == s["first_digit"]["counts"], s["name"]
    assert [s["name"] for s in cnt["suppliers"]] == [s["name"] for s in raw["suppliers"]]


def watch(path, *extra):
    out = subprocess.run([BIN, "watch", str(path), "--format", "json", *extra], capture_output=True)
    assert out.returncode in (0, 3), out.stderr.decode()
    return out.returncode, json.loads(out.stdout)


@pytest.mark.skipif(not DEMO.exists() or not Path(BIN).exists(), reason="demo ledger or release CLI missing")
def test_duckdb_monthly_counts_drive_the_monitor_at_month_ends(tmp_path):
    """The same ledger as a raw file (invoice-level monitor, evidence reported at every month end)
    and as a DuckDB monthly count table (monitor at period granularity): the since-the-start
    evidence at each month end must agree. It is a product of per-invoice likelihood ratios, so
    the unknown order within a month cannot change it; only floating-point summation order
    differs (tolerance 1e-9 relative, common practice, no source). Alarms of the since-the-start
    evidence fall in the same month."""
    sql = (ROOT / "tests/reference/sql/first_two_counts_monthly.sql").read_text().replace("{LEDGER}", str(DEMO))
    con = duckdb.connect()
    out = tmp_path / "monthly.csv"
    con.execute(f"COPY ({sql.rstrip().rstrip(';')}) TO '{out}' (HEADER, DELIMITER ',')")
    _, raw = watch(DEMO, "--period", "month")
    _, cnt = watch(out)
    assert cnt["notes"] and "period ends" in cnt["notes"][0]
    by_name = {s["name"]: s for s in cnt["suppliers"]}
    assert len(by_name) == len(raw["suppliers"])
    compared = checked_alarms = 0
    for s in raw["suppliers"]:
        c = by_name[s["name"]]
        assert c["invoices"] == s["invoices"], s["name"]
        assert abs(c["amount_total"] - s["amount_total"]) < 0.005, s["name"]
        r_ends = {p["period"]: p for p in s["trajectory"] if p["period"]}
        c_ends = {p["period"]: p for p in c["trajectory"]}
        assert set(r_ends) == set(c_ends), s["name"]
        for m, p in r_ends.items():
            q = c_ends[m]
            assert q["invoice"] == p["invoice"], (s["name"], m)
            assert q["since_start_log"] == pytest.approx(p["since_start_log"], rel=1e-9, abs=1e-9), (s["name"], m)
            compared += 1
        # The period alarm of the since-the-start evidence is the first month end at which the
        # raw monitor's month-end evidence is on or above the line (a crossing inside a month
        # can fall back by its end: E is not monotone), and never before the raw alarm.
        line = s["evidence"]["since_start_threshold_log"]
        first = next((p for p in sorted(r_ends.values(), key=lambda p: p["invoice"]) if p["since_start_log"] >= line), None)
        if first is None:
            assert c["since_start_alarm_date"] is None, s["name"]
        else:
            # alarm date = last day of that month (the table's point for the month carries it)
            assert c["since_start_alarm_date"] == c_ends[first["period"]]["date"], s["name"]
            assert c["since_start_alarm_date"].startswith(first["period"]), s["name"]
            assert s["since_start_alarm_date"] is not None and s["since_start_alarm_date"] <= first["date"], s["name"]
            checked_alarms += 1
    assert compared > 100 and checked_alarms > 0


@pytest.mark.skipif(not DEMO.exists() or not Path(BIN).exists(), reason="demo ledger or release CLI missing")
def test_watch_refuses_a_count_table_without_periods(tmp_path):
    sql = (ROOT / "tests/reference/sql/first_two_counts.sql").read_text().replace("{LEDGER}", str(DEMO))
    out = tmp_path / "counts.csv"
    duckdb.connect().execute(f"COPY ({sql.rstrip().rstrip(';')}) TO '{out}' (HEADER, DELIMITER ',')")
    r = subprocess.run([BIN, "watch", str(out)], capture_output=True)
    assert r.returncode == 2 and b"period" in r.stderr
