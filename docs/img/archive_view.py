"""Render the archive view of `drc check` to docs/img/archive.png (run from the repository root).

The archive is the four LX-24 demo boards plus two files that stand for what
real archives hold: an export that came out empty and one cut short inside
a subcircuit definition (no .ends: not read). The view is printed by the text report's
own terminal writer at 110 columns with colour, recorded by rich as SVG and
photographed by headless Chromium (Debian package `chromium`).

    python docs/img/archive_view.py
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
from dataclasses import replace
from pathlib import Path

from rich.console import Console

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from drc.pipeline import CheckOptions, audit  # noqa: E402
from drc.report.layout import plain, print_lines  # noqa: E402
from drc.report.text import archive_lines, total_line  # noqa: E402


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        archive = Path(tmp) / "archive"
        shutil.copytree(ROOT / "boards" / "lx24", archive)
        (archive / "spare_panel.cir").write_text("")
        (archive / "old_console.cir").write_text("old console\n.subckt KEYS a b\nR1 a b 10k\n.end\n")
        run = audit([archive], CheckOptions(propose_fixes=False))
        run = replace(run, boards=tuple(replace(b, path=str(Path(b.path).relative_to(tmp)))
                                        for b in run.boards))
        console = Console(record=True, width=110, force_terminal=True, color_system="truecolor")
        console.print("$ drc check archive/  (end of the report)", style="dim")
        print_lines(console, [plain(total_line(run), "bold", hang=2), plain("")])
        print_lines(console, archive_lines(run, width=console.width))
        svg = Path(tmp) / "archive.svg"
        svg.write_text(console.export_svg(title="drc check archive/"), encoding="utf-8")
        out = ROOT / "docs" / "img" / "archive.png"
        subprocess.run([_browser(), "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
                        f"--user-data-dir={tmp}/profile", "--window-size=1180,420",
                        f"--screenshot={out}", svg.as_uri()], check=True, capture_output=True, timeout=120)
        print(out)


def _browser() -> str:
    if os.environ.get("DRC_BROWSER"):
        return os.environ["DRC_BROWSER"]
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    raise SystemExit("needs Chromium (Debian: apt-get install -y chromium)")


if __name__ == "__main__":
    main()
