"""The HTML plan in a real headless browser (Chromium from the system's packages): it renders
without console errors, no request leaves the file, and the screenshot is not blank. Also its
structure without a browser: one file, images as data URIs, a sortable table, the safety note.

The browser is driven by its own command-line switches: --screenshot for the picture,
--enable-logging=stderr for the console (lines tagged CONSOLE), --log-net-log for every request
the page starts. Name resolution is mapped to nothing (--host-resolver-rules), so even a
request that slipped through could not reach the network.
"""

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest
from typer.testing import CliRunner

from conftest import DEMO_DIR
from vigil.cli import app

BROWSER = next((shutil.which(name) for name in ("chromium", "chromium-browser") if shutil.which(name)), None)
needs_browser = pytest.mark.skipif(BROWSER is None, reason="no Chromium installed (Debian: apt-get install chromium); "
                                                           ".ci/run installs it so CI runs this test")


def _browse(page: Path, folder: Path) -> dict:
    """Load `page` in headless Chromium; return its console lines, the URLs the page requested
    (browser-internal requests, which have no origin, left out) and the screenshot path."""
    shot, net_log = folder / "shot.png", folder / "net.json"
    switches = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                "--disable-component-update", "--disable-sync", "--no-first-run", "--hide-scrollbars",
                f"--user-data-dir={folder / 'profile'}", "--host-resolver-rules=MAP * ~NOTFOUND",
                "--enable-logging=stderr", "--v=0", f"--log-net-log={net_log}", "--window-size=1280,2400",
                "--virtual-time-budget=3000", f"--screenshot={shot}"]
    done = subprocess.run([BROWSER, *switches, page.resolve().as_uri()], capture_output=True, text=True, timeout=120)
    assert shot.exists(), done.stderr[-2000:]
    console = [line for line in done.stderr.splitlines() if ":CONSOLE" in line]
    events = json.loads(net_log.read_text(encoding="utf-8"))
    start_job = events["constants"]["logEventTypes"]["URL_REQUEST_START_JOB"]
    begun = [e["params"] for e in events["events"] if e["type"] == start_job and "url" in e.get("params", {})]
    requested = [p["url"] for p in begun if p.get("initiator") != "not an origin"]
    return {"console": console, "requests": requested, "screenshot": shot}


def _not_blank(path: Path) -> bool:
    import matplotlib.image

    pixels = matplotlib.image.imread(path)[..., :3]
    return float(pixels.std()) > 0.05 and float((pixels.mean(axis=-1) < 0.9).mean()) > 0.01


@pytest.fixture(scope="module")
def plan(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("plan")
    result = CliRunner().invoke(app, ["windows", str(DEMO_DIR / "targets.csv"), "--sites", str(DEMO_DIR / "sites.toml"),
                                      "--start", "2027-03-01", "--end", "2027-04-30", "--html", str(folder / "plan.html")])
    assert result.exit_code == 0, result.output
    return folder / "plan.html"


def test_plan_is_one_file_with_embedded_images_and_no_outside_reference(plan):
    text = plan.read_text(encoding="utf-8")
    sources = re.findall(r'(?:src|href)="([^"]*)"', text)
    assert len(sources) >= 2 and all(s.startswith("data:image/png;base64,") for s in sources)
    assert not re.search(r"https?://", text)
    assert "default-src 'none'" in text  # the page itself forbids any request
    assert "own rules for night work and Sun avoidance" in text and 'class="sortable"' in text


@needs_browser
def test_browser_renders_the_plan_without_errors_or_requests(plan, tmp_path):
    seen = _browse(plan, tmp_path)
    assert seen["console"] == []
    assert [url for url in seen["requests"] if not url.startswith(("file:", "data:"))] == []
    assert _not_blank(seen["screenshot"])


@needs_browser
def test_the_browser_check_catches_errors_and_outside_requests(tmp_path):
    # The harness must be able to fail: a page with a script error and an outside image.
    bad = tmp_path / "bad.html"
    bad.write_text('<!DOCTYPE html><p>x</p><img src="http://192.0.2.1/x.png"><script>missing();</script>',
                   encoding="utf-8")
    seen = _browse(bad, tmp_path)
    assert any("missing is not defined" in line for line in seen["console"])
    assert "http://192.0.2.1/x.png" in seen["requests"]


@needs_browser
def test_table_sorting_script_runs_in_the_browser(plan, tmp_path):
    # Click the first header with a script appended to a copy; the sorted order is dumped as the DOM.
    clicked = tmp_path / "clicked.html"
    page = plan.read_text(encoding="utf-8")
    probe = ('<script>var h = document.querySelectorAll("table.sortable th")[1]; h.click(); h.click();'
             'document.title = "first:" + document.querySelector("table.sortable tbody tr").cells[1].textContent;'
             "</script></body>")
    clicked.write_text(page.replace("</body>", probe), encoding="utf-8")
    switches = ["--headless", "--no-sandbox", "--disable-gpu", "--no-first-run", f"--user-data-dir={tmp_path / 'p'}",
                "--host-resolver-rules=MAP * ~NOTFOUND", "--dump-dom"]
    dom = subprocess.run([BROWSER, *switches, clicked.as_uri()], capture_output=True, text=True, timeout=120).stdout
    names = re.findall(r"<tr><td>[^<]*</td><td>([^<]*)</td>", dom)
    assert names and names == sorted(names, reverse=True)  # two clicks: descending by target
    assert "<title>first:" in dom


def test_campaign_html_has_verdicts_and_forecast(tmp_path):
    from test_reproducible import CAMPAIGN

    spec = tmp_path / "c.toml"
    spec.write_text(CAMPAIGN.format(targets=DEMO_DIR / "targets.csv", sites=DEMO_DIR / "sites.toml"), encoding="utf-8")
    result = CliRunner().invoke(app, ["campaign", str(spec), "--out", str(tmp_path / "out"),
                                      "--html", str(tmp_path / "c.html")])
    assert result.exit_code == 0, result.output
    text = (tmp_path / "c.html").read_text(encoding="utf-8")
    assert "Verdict per target" in text and text.count("data:image/png;base64,") >= 3
    assert os.path.getsize(tmp_path / "c.html") > 10_000
