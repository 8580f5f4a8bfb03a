"""Campaign journal checked with Python's csv and sqlite3 modules, astropy Time and a refit."""

import csv
import re
import sqlite3
import subprocess
import sys
import textwrap

import numpy as np
import pandas as pd
import pytest
from astropy.time import Time

import vigil  # noqa: F401  (configures astropy offline before anything else)
from vigil import journal as journal_module
from vigil.errors import InputError
from vigil.journal import COLUMNS, open_journal
from vigil.ephemeris.fitting import fit_polynomial
from vigil.ephemeris.refit import refit_targets

# Invented targets, sites and ephemeris.
TRUE_T0_BJD_TDB = 2461102.34567
TRUE_PERIOD_D = 2.8734521
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")  # OWASP "CSV Injection": cells spreadsheets run as formulas


def _visit(**fields):
    entry = {"target": "Marrow b", "site": "Cerro Lento", "epoch": 12, "start_utc": "2027-03-04T22:15:00Z",
             "end_utc": "2027-03-05T02:45:00Z", "status": "planned"}
    return {**entry, **fields}


def _executed(epoch, mid_bjd_tdb, mid_err_d, **fields):
    return _visit(epoch=epoch, status="executed", outcome="clear", mid_bjd_tdb=mid_bjd_tdb, mid_err_d=mid_err_d,
                  in_transit_h=2.5, baseline_h=1.75, **fields)


def _varied_entries():
    """Visits covering every field, with text that a CSV writer and a spreadsheet find awkward."""
    return [
        _visit(in_transit_h=2.5, baseline_h=2.0, notes="first try, \"quoted\" and, commas"),
        _executed(12, 2461469.5270212345, 0.00041, notes="=HYPERLINK(\"http://x.invalid\",\"click\")"),
        _visit(epoch=13, site="Isla Quieta", start_utc="2027-03-07T21:00:00Z", end_utc="2027-03-08T01:00:00Z",
               status="executed", outcome="weather", notes="'already quoted"),
        _visit(target="+Pellucid c", epoch=-4, start_utc="2026-12-31T23:00:00Z", end_utc="2027-01-01T03:30:00Z",
               status="executed", outcome="partial", mid_bjd_tdb=2461406.523456789, mid_err_d=1.2e-3,
               in_transit_h=1.0, notes="two lines\nsecond line; ünïcode"),
        _visit(target="+Pellucid c", epoch=-3, start_utc="2027-01-03T23:00:00Z", end_utc="2027-01-04T03:30:00Z",
               status="executed", outcome="technical", baseline_h=0.5, notes="@dome stuck"),
    ]


def _dump(path) -> list[str]:
    """The whole database (schema and rows) as SQL text, read through a separate connection."""
    with sqlite3.connect(path) as db:
        return list(db.iterdump()) + [f"user_version {db.execute('PRAGMA user_version').fetchone()[0]}"]


def test_csv_round_trip_gives_identical_entries(tmp_path):
    # Reference: the entries put in; the CSV itself is parsed back with Python's csv module.
    with open_journal(tmp_path / "a.db") as first:
        for entry in _varied_entries():
            first.add(entry)
        first.export_csv(tmp_path / "a.csv")
        original = first.entries()
    with open_journal(tmp_path / "b.db") as second:
        assert second.import_csv(tmp_path / "a.csv") == len(original)
        copied = second.entries()
        second.export_csv(tmp_path / "b.csv")
    pd.testing.assert_frame_equal(copied, original)
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    assert original.loc[original["epoch"] == 12, "mid_bjd_tdb"].dropna().iloc[0] == 2461469.5270212345  # exact float
    with open(tmp_path / "a.csv", newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    assert list(rows[0]) == list(COLUMNS) and len(rows) == len(original)


def test_stored_times_are_iso_8601_utc_and_equal_the_given_instant(tmp_path):
    # Reference: astropy Time parsing of the stored strings (ISO 8601, 'Z' = UTC); a fractional
    # second is rounded to the nearest second, and a leap second is a valid UTC time.
    with open_journal(tmp_path / "j.db") as journal:
        journal.add(_visit(start_utc="2027-3-4T22:15:00.6Z", end_utc="2027-03-05T02:45Z"))
        journal.add(_visit(epoch=99, start_utc="2016-12-31T23:59:60Z", end_utc="2017-01-01T03:00:00Z"))
        table = journal.entries()
        journal.export_csv(tmp_path / "j.csv")
    stored_text = [row["start_utc"] for row in csv.DictReader(open(tmp_path / "j.csv", encoding="utf-8"))]
    assert stored_text == ["2016-12-31T23:59:60Z", "2027-03-04T22:15:01Z"]
    given = Time(["2016-12-31T23:59:60", "2027-03-04T22:15:00.6"], scale="utc")
    stored = Time([s[:-1] for s in stored_text], scale="utc")
    assert np.all(np.abs((stored - given).to_value("s")) <= 0.5)
    # In Python the times are aware UTC datetimes; a leap second, which they cannot hold, is 23:59:59.
    assert str(table["start_utc"].dtype) == "datetime64[s, UTC]"
    handed_out = Time([t.to_pydatetime() for t in table["start_utc"]], scale="utc")
    np.testing.assert_allclose(np.abs((handed_out - stored).to_value("s")), [1.0, 0.0], atol=1e-6)


def test_duplicate_visit_is_rejected_with_target_site_and_epoch(tmp_path):
    with open_journal(tmp_path / "j.db") as journal:
        journal.add(_visit())
        journal.add(_executed(12, 2461469.527, 4e-4))  # same visit, now executed: a different record
        before = journal.entries()
        with pytest.raises(InputError, match=r"planned visit of target 'Marrow b' at site 'Cerro Lento', epoch 12, "
                                             r"is already in the journal"):
            journal.add(_visit(start_utc="2027-03-04T22:30:00Z"))
        pd.testing.assert_frame_equal(journal.entries(), before)
        # The same visit twice in one file: the second line is named and nothing is added.
        path = tmp_path / "twice.csv"
        path.write_text("target,site,epoch,start_utc,end_utc,status\n"
                        "Marrow b,Isla Quieta,3,2027-01-01T01:00:00Z,2027-01-01T04:00:00Z,planned\n"
                        "Marrow b,Isla Quieta,3,2027-01-01T01:00:00Z,2027-01-01T04:00:00Z,planned\n", encoding="utf-8")
        with pytest.raises(InputError, match=rf"{path}: line 3: the planned visit of target 'Marrow b' at site "
                                             r"'Isla Quieta', epoch 3"):
            journal.import_csv(path)
        pd.testing.assert_frame_equal(journal.entries(), before)


def _import_file(tmp_path, count=6):
    path = tmp_path / "import.csv"
    with open_journal(tmp_path / "source.db") as source:
        for epoch in range(count):
            source.add(_visit(target="Quorn d", epoch=epoch, start_utc=f"2027-05-{epoch + 1:02d}T01:00:00Z",
                              end_utc=f"2027-05-{epoch + 1:02d}T04:00:00Z"))
        source.export_csv(path)
    return path


def test_exception_mid_import_leaves_database_unchanged(tmp_path, monkeypatch):
    # Reference: sqlite3's own dump of schema and rows (Connection.iterdump) before and after.
    db_path = tmp_path / "j.db"
    with open_journal(db_path) as journal:
        for entry in _varied_entries():
            journal.add(entry)
    before = _dump(db_path)
    real_insert, calls = journal_module._insert, []

    def failing_insert(db, row, where):
        calls.append(where)
        if len(calls) == 4:
            raise RuntimeError("simulated crash")
        real_insert(db, row, where)

    monkeypatch.setattr(journal_module, "_insert", failing_insert)
    with open_journal(db_path) as journal, pytest.raises(RuntimeError, match="simulated crash"):
        journal.import_csv(_import_file(tmp_path))
    assert len(calls) == 4  # three rows were inserted before the crash, and then undone
    assert _dump(db_path) == before


def test_killed_process_mid_import_leaves_database_unchanged(tmp_path):
    # The process dies (os._exit, no cleanup, no rollback) after three rows; SQLite's rollback
    # journal must restore the file when it is next opened (SQLite atomic commit).
    db_path = tmp_path / "j.db"
    with open_journal(db_path) as journal:
        journal.add(_visit())
    before = _dump(db_path)
    script = textwrap.dedent(f"""
        import os
        import vigil.journal as j
        real, calls = j._insert, []
        def dying(db, row, where):
            calls.append(where)
            if len(calls) == 4:
                os._exit(17)
            real(db, row, where)
        j._insert = dying
        j.open_journal({str(db_path)!r}).import_csv({str(_import_file(tmp_path))!r})
    """)
    result = subprocess.run([sys.executable, "-c", script], capture_output=True, timeout=60)
    assert result.returncode == 17, result.stderr.decode()
    assert _dump(db_path) == before


@pytest.mark.parametrize(
    ("field", "value", "expected"),
    [("epoch", "3.5", "a whole transit number"),
     ("start_utc", "2027-05-04T01:00:00", "an ISO 8601 UTC time ending in Z"),
     ("end_utc", "2027-02-30T04:00:00Z", "an ISO 8601 UTC time ending in Z"),
     ("status", "done", "one of planned, executed"),
     ("outcome", "clear", "nothing for a planned visit"),
     ("in_transit_h", "-1", "hours >= 0"),
     ("baseline_h", "lots", "hours >= 0"),
     ("mid_err_d", "0.001", "with mid_err_d \\(both or neither\\)"),
     ("target", "", "a name")],
)
def test_bad_row_names_file_line_field_and_expectation(tmp_path, field, value, expected):
    path = _import_file(tmp_path)
    with open(path, newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    rows[0]["notes"] = "a note\nover two lines"  # the bad row's line number must count this
    rows[3][field] = value
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(COLUMNS), lineterminator="\n")
        writer.writeheader()
        writer.writerows(rows)
    # Reference line number: the physical line of the file text where the bad row starts.
    lines = path.read_text(encoding="utf-8").split("\n")
    bad_line = 1 + next(i for i, text in enumerate(lines) if "2027-05-04T01:00:00" in text)
    assert bad_line == 6  # header, row 1 (two lines), rows 2-3, then row 4
    db_path = tmp_path / "j.db"
    with open_journal(db_path) as journal:
        journal.add(_visit())
    before = _dump(db_path)
    with open_journal(db_path) as journal, pytest.raises(InputError) as error:
        journal.import_csv(path)
    message = str(error.value)
    assert "\n" not in message
    named = "mid_bjd_tdb" if field == "mid_err_d" else field  # a lone mid_err_d lacks its mid_bjd_tdb
    assert message.startswith(f"{path}: line {bad_line}, field {named}: expected ")
    assert re.search(expected, message)
    assert _dump(db_path) == before


def test_other_entry_checks_give_one_clear_line(tmp_path):
    with open_journal(tmp_path / "j.db") as journal:
        cases = [
            (_visit(colour="red"), "unknown field.*colour"),
            (_visit(end_utc="2027-03-04T20:00:00Z"), "field end_utc: expected a time after start_utc"),
            (_visit(status="executed"), "field outcome: expected one of clear, partial, weather, technical"),
            (_visit(status="executed", outcome="weather", mid_bjd_tdb=2461469.5, mid_err_d=1e-3),
             "field mid_bjd_tdb: a measured mid-time needs an executed clear or partial visit"),
            (_executed(12, 61136.8, 1e-3), "field mid_bjd_tdb: expected a full Julian date"),
            (_executed(12, 2461136.8, -1e-3), "field mid_err_d: expected a positive uncertainty in days"),
            (_visit(in_transit_h=3.0, baseline_h=2.0), "expected together at most the visit's 4.500 h, got 5.000 h"),
            (_visit(epoch=True), "field epoch: expected a whole transit number"),
        ]
        for entry, match in cases:
            with pytest.raises(InputError, match=match):
                journal.add(entry)
        assert journal.entries().empty


def test_timings_feed_refit_and_recover_a_known_ephemeris(tmp_path):
    # Synthetic timings from a known ephemeris with Gaussian errors (seeded numpy RNG), mixed in
    # with visits that yield no timing. Reference: vigil.ephemeris.fitting.fit_polynomial on the same
    # arrays (checked against numpy.polyfit in test_refit.py) must give the same fit to rounding
    # (the journal keeps every float exactly), and the truth must lie within 3 sigma.
    rng = np.random.default_rng(42)
    epochs = np.sort(rng.choice(np.arange(0, 300), size=10, replace=False))
    errors = rng.uniform(0.4, 2.0, epochs.size) / 1440.0
    times = TRUE_T0_BJD_TDB + epochs * TRUE_PERIOD_D + rng.normal(0.0, errors)
    with open_journal(tmp_path / "j.db") as journal:
        for n, t, s in zip(epochs, times, errors):
            start = Time(t - 0.1, format="jd", scale="utc").isot[:19] + "Z"  # a label only; UTC vs TDB irrelevant here
            end = Time(t + 0.1, format="jd", scale="utc").isot[:19] + "Z"
            journal.add(_executed(int(n), t, s, start_utc=start, end_utc=end, notes=f"run {n}"))
            journal.add(_visit(epoch=int(n), start_utc=start, end_utc=end))  # the plan, no timing
        journal.add(_visit(epoch=999, status="executed", outcome="weather", start_utc="2029-01-01T00:00:00Z",
                           end_utc="2029-01-01T03:00:00Z"))
        timings = journal.timings()
    assert list(timings.columns) == ["target", "mid_bjd_tdb", "mid_err_d", "note", "epoch", "forced"]
    assert len(timings) == epochs.size and not timings["forced"].any()
    catalogue = pd.DataFrame({"name": ["Marrow b"], "ra_deg": [75.0], "dec_deg": [12.0],
                              "t0_bjd_tdb": [TRUE_T0_BJD_TDB + 0.002], "t0_err_d": [3e-3],
                              "period_d": [TRUE_PERIOD_D - 3e-6], "period_err_d": [2e-5], "duration_h": [2.2]})
    refit = refit_targets(timings, catalogue, use_prior=False)
    fitted, oc = refit.targets, refit.o_minus_c
    row = fitted.iloc[0]
    reference = fit_polynomial(epochs, times, errors).ephemeris
    assert row["period_d"] == pytest.approx(reference.period_d, abs=1e-12)
    assert row["t0_bjd_tdb"] == pytest.approx(reference.t0_bjd_tdb, abs=1e-9)
    assert row["period_err_d"] == pytest.approx(reference.period_err_d, rel=1e-9)
    assert abs(row["period_d"] - TRUE_PERIOD_D) < 3 * row["period_err_d"]
    truth_t0 = TRUE_T0_BJD_TDB + reference.t0_epoch * TRUE_PERIOD_D
    assert abs(row["t0_bjd_tdb"] - truth_t0) < 3 * row["t0_err_d"]
    assert set(oc["note"]) == {f"Cerro Lento epoch {n}; run {n}" for n in epochs}


def test_executed_hours_sum_clear_and_partial_visits_only(tmp_path):
    # Reference: the same sums done with pandas over entries() (clear and partial outcomes only).
    with open_journal(tmp_path / "j.db") as journal:
        for entry in _varied_entries():
            journal.add(entry)
        journal.add(_executed(40, 2461557.6, 5e-4, target="+Pellucid c", start_utc="2027-06-01T01:00:00Z",
                              end_utc="2027-06-01T05:30:00Z"))
        hours = journal.executed_hours().set_index("target")
        table = journal.entries()
    used = table[(table["status"] == "executed") & table["outcome"].isin(["clear", "partial"])]
    expected = used.groupby("target")[["in_transit_h", "baseline_h"]].sum()  # NaN counts as 0
    assert sorted(hours.index) == sorted(expected.index) == ["+Pellucid c", "Marrow b"]
    for target in expected.index:
        assert hours.loc[target, "in_transit_h"] == pytest.approx(expected.loc[target, "in_transit_h"])
        assert hours.loc[target, "baseline_h"] == pytest.approx(expected.loc[target, "baseline_h"])
        assert hours.loc[target, "visits"] == (used["target"] == target).sum()
    assert hours.loc["+Pellucid c", "in_transit_h"] == pytest.approx(3.5)  # 1.0 partial + 2.5 clear


def test_export_neutralises_formula_text_for_spreadsheets(tmp_path):
    # OWASP "CSV Injection" (formula injection): a cell beginning with =, +, -, @, tab or
    # carriage return is run as a formula by spreadsheet programs; exported text cells must not
    # begin so. Parsed back with Python's csv module as an independent reader.
    with open_journal(tmp_path / "j.db") as journal:
        for entry in _varied_entries():
            journal.add(entry)
        journal.add(_visit(epoch=77, notes="-2+3 minutes late"))
        journal.add(_visit(epoch=78, site="\tTabbed site"))
        journal.export_csv(tmp_path / "out.csv")
    with open(tmp_path / "out.csv", newline="", encoding="utf-8") as handle:
        rows = list(csv.DictReader(handle))
    cells = [row[c] for row in rows for c in ("target", "site", "notes")]
    assert not [c for c in cells if c.startswith(FORMULA_STARTS)]
    notes = {row["notes"] for row in rows}
    assert "'=HYPERLINK(\"http://x.invalid\",\"click\")" in notes and "'-2+3 minutes late" in notes
    assert "'+Pellucid c" in {row["target"] for row in rows}
    assert "''already quoted" in notes  # an apostrophe of the user's own is doubled, so import restores it
    numbers = [float(row["mid_bjd_tdb"]) for row in rows if row["mid_bjd_tdb"]]
    assert 2461406.523456789 in numbers  # numeric cells stay numbers


def test_planned_visits_from_a_campaign_visits_table(tmp_path):
    # Reference: astropy Time reading the stored ISO strings back to JD UTC (within the 0.5 s rounding).
    visits = pd.DataFrame({
        "target": ["Marrow b", "Quorn d"], "site": ["Cerro Lento", "Isla Quieta"], "epoch": [12, 40],
        "coverage": ["full", "ingress"], "mid_jd_utc": [2461469.55, 2461500.61],
        "start_jd_utc": [2461469.43, 2461500.52], "end_jd_utc": [2461469.66, 2461500.71],
        "in_transit_h": [2.2, 1.5], "baseline_h": [3.32, 3.06], "telescope_h": [5.87, 4.91],
    })
    with open_journal(tmp_path / "j.db") as journal:
        assert journal.add_planned_visits(visits) == 2
        table = journal.entries(status="planned")
        assert journal.entries(status="executed").empty and len(journal.entries(target="Quorn d")) == 1
        with pytest.raises(InputError, match="visits table row 0: the planned visit of target 'Marrow b'"):
            journal.add_planned_visits(visits)
    start = Time([t.to_pydatetime() for t in table["start_utc"]], scale="utc").jd
    np.testing.assert_allclose((start - visits["start_jd_utc"].to_numpy()) * 86400.0, 0.0, atol=0.5)
    assert list(table["in_transit_h"]) == [2.2, 1.5] and table["outcome"].isna().all()


def test_csv_header_problems_are_named(tmp_path):
    path = tmp_path / "bad.csv"
    with open_journal(tmp_path / "j.db") as journal:
        for header, match in (("target,site,epoch,start_utc,end_utc", "line 1: missing column.*status"),
                              ("target,site,epoch,start_utc,end_utc,status,colour", "line 1: unknown column.*colour"),
                              ("", "file is empty")):
            path.write_text(header + "\n" if header else "", encoding="utf-8")
            with pytest.raises(InputError, match=match):
                journal.import_csv(path)
        path.write_text("target,site,epoch,start_utc,end_utc,status\nA,B,1,2027-01-01T00:00:00Z\n", encoding="utf-8")
        with pytest.raises(InputError, match="line 2: expected 6 fields as in the header, got 4"):
            journal.import_csv(path)
