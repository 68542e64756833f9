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
