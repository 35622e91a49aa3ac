"""The HTML report in a real browser: headless Chromium (Debian package `chromium`).

Chromium loads a demo-board report from a file with name resolution mapped
to nowhere (so any attempt to fetch something from the network fails), prints
the DOM it built (--dump-dom) and every console message (--enable-logging);
the page has no script, so any console line means something went wrong. A
control page that logs on purpose proves the console capture works. The
same page is then photographed (copied to docs/img/report.png when
DRC_SCREENSHOTS is set), and the tables measured at a 1200 px window.
"""

from __future__ import annotations

import os
import re
import shutil
import struct
import subprocess
from pathlib import Path

import pytest

from drc.report.html import render_html
from tests.report.html_demo import run_report

ROOT = Path(__file__).resolve().parents[2]
SCREENSHOT = ROOT / "docs" / "img" / "report.png"
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--no-first-run", "--hide-scrollbars",
         "--host-resolver-rules=MAP * ~NOTFOUND"]
_CONSOLE = re.compile(r":CONSOLE[:(]")


def _browser() -> str:
    """DRC_BROWSER (the build .ci/run installs where the distribution has no Chromium
    package), else a Chromium on PATH; skipped on a developer machine without one,
    failed in CI."""
    chosen = os.environ.get("DRC_BROWSER")
    if chosen:
        return chosen
    for name in ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable"):
        path = shutil.which(name)
        if path:
            return path
    if os.environ.get("CI"):
        pytest.fail("no Chromium: .ci/run installs it (Debian package `chromium`, else Playwright's build)")
    pytest.skip("no Chromium browser installed, the HTML report is not rendered in a browser here "
                "(Debian: apt-get install -y chromium; or set DRC_BROWSER)")


def _run(browser: str, profile: Path, *args: str) -> subprocess.CompletedProcess:
    profile.mkdir(parents=True, exist_ok=True)
    return subprocess.run([browser, *FLAGS, f"--user-data-dir={profile}", *args], capture_output=True,
                          text=True, timeout=120, cwd=profile)


def _console_lines(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if _CONSOLE.search(line)]


@pytest.fixture(scope="module")
def page(tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("report") / "front_panel.html"
    path.write_text(render_html(run_report("front_panel.cir")), encoding="utf-8")
    return path


def test_console_capture_works(tmp_path):
    browser = _browser()
    control = tmp_path / "control.html"
    control.write_text('<!doctype html><meta charset="utf-8"><p>control</p>'
                       '<script>console.error("drc-console-control")</script>', encoding="utf-8")
    proc = _run(browser, tmp_path / "profile", "--enable-logging=stderr", "--v=0", "--dump-dom",
                control.as_uri())
    assert any("drc-console-control" in line for line in _console_lines(proc.stderr)), proc.stderr[-2000:]


def test_report_loads_without_console_messages(page, tmp_path):
    browser = _browser()
    proc = _run(browser, tmp_path / "profile", "--enable-logging=stderr", "--v=0", "--dump-dom", page.as_uri())
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert _console_lines(proc.stderr) == []
    dom = proc.stdout
    # The DOM the browser built holds the report: the board, its table rows and the inline plots.
    run = run_report("front_panel.cir")
    board = run.boards[0]
    assert 'id="board-0"' in dom
    assert dom.count('<svg class="waveform"') == sum(1 for r in board.stages if r.edges)
    assert len(re.findall(r'<tr class="row-', dom)) == len(board.stages)
    assert "Engineering caution" in dom


def test_screenshot(page, tmp_path):
    browser = _browser()
    shot = tmp_path / "report.png"
    proc = _run(browser, tmp_path / "profile", f"--screenshot={shot}", "--window-size=1200,2400", page.as_uri())
    assert proc.returncode == 0 and shot.exists(), proc.stderr[-2000:]
    data = shot.read_bytes()
    # PNG signature and IHDR size (ISO/IEC 15948): the window we asked for.
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    width, height = struct.unpack(">II", data[16:24])
    assert (width, height) == (1200, 2400)
    if os.environ.get("DRC_SCREENSHOTS"):  # refresh the README's picture only when asked
        shutil.copyfile(shot, SCREENSHOT)



# Measures, after layout, whether each table fits its box: the report has no script, so the
# test adds this one to a copy of the page and reads its answer from the DOM Chromium dumps.
_MEASURE = """<script>
window.addEventListener('load', () => {
  const out = [...document.querySelectorAll('.table-wrap')].map(wrap => {
    const cells = wrap.querySelectorAll('tbody tr > :last-child');
    const right = Math.max(0, ...[...cells].map(c => c.getBoundingClientRect().right));
    return {table: wrap.querySelector('table').className, box: wrap.clientWidth, content: wrap.scrollWidth,
            right: right, edge: wrap.getBoundingClientRect().right};
  });
  const pre = document.createElement('pre');
  pre.id = 'drc-measure';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script>"""


def test_tables_fit_at_1200_px(tmp_path):
    """At a 1200 px window every table fits its box: no sideways scroll, the last column
    (status, board) visible. The widest demo board is the dimmer rack (7 stages)."""
    import json

    from tests.report.html_demo import ALL
    browser = _browser()
    page = tmp_path / "all.html"
    page.write_text(render_html(run_report(*ALL)).replace("</body>", _MEASURE + "</body>"), encoding="utf-8")
    proc = _run(browser, tmp_path / "profile", "--window-size=1200,900", "--virtual-time-budget=5000",
                "--dump-dom", page.as_uri())
    match = re.search(r'<pre id="drc-measure">([^<]*)</pre>', proc.stdout)
    assert match, proc.stderr[-2000:]
    tables = json.loads(match.group(1).replace("&quot;", '"'))
    assert [t["table"] for t in tables].count("paths") == len(ALL) and "archive" in [t["table"] for t in tables]
    for table in tables:
        assert table["content"] <= table["box"], table
        assert table["right"] <= table["edge"] + 0.5, table
