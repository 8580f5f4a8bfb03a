"""Calendar revisions: a second run into the same file after changing --sigma keeps every UID,
raises SEQUENCE (RFC 5545 3.8.7.4) only for events whose times changed, and parses back with
two independent parsers (icalendar and vobject)."""

import icalendar
import vobject
from typer.testing import CliRunner

from authorities.charts import FIRST_SEQUENCE
from conftest import DEMO_DIR
from vigil.cli import app


def _run(path, *extra):
    result = CliRunner().invoke(app, ["windows", str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml"),
                                      "--start", "2027-03-01", "--end", "2027-03-20", "--ics", str(path), *extra])
    assert result.exit_code == 0, result.output


def _events_icalendar(path) -> dict:
    calendar = icalendar.Calendar.from_ical(path.read_bytes())
    return {str(e["UID"]): (int(e["SEQUENCE"]), e.decoded("DTSTART"), e.decoded("DTEND"), e.decoded("LAST-MODIFIED"))
            for e in calendar.walk("VEVENT")}


def _events_vobject(path) -> dict:
    calendar = vobject.readOne(path.read_text(encoding="utf-8"))
    return {e.uid.value: (int(e.sequence.value), e.dtstart.value, e.dtend.value) for e in calendar.vevent_list}


def test_sigma_change_raises_sequence_of_changed_events_only(tmp_path, monkeypatch):
    path = tmp_path / "w.ics"
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1800000000")
    _run(path, "--sigma", "1")
    first = _events_icalendar(path)
    assert first and {seq for seq, *_ in first.values()} == {FIRST_SEQUENCE}
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1800086400")  # one day later
    _run(path, "--sigma", "3", "--force")
    second, other = _events_icalendar(path), _events_vobject(path)
    assert {uid: v[:3] for uid, v in second.items()} == other  # both parsers read the same calendar
    common = set(first) & set(second)
    assert len(common) >= 5
    changed = {uid for uid in common if first[uid][1:3] != second[uid][1:3]}
    # A wider padding moves every window's edges, but only some observable stretches.
    assert changed and common - changed
    for uid in common:
        if uid in changed:
            assert second[uid][0] == first[uid][0] + 1 and second[uid][3] > first[uid][3]
        else:
            assert second[uid][0] == first[uid][0] and second[uid][3] == first[uid][3]
    # Rerunning with the same inputs changes nothing.
    before = path.read_bytes()
    _run(path, "--sigma", "3", "--force")
    assert path.read_bytes() == before
