"""`drc check --thorough-fixes`: values for stages on the exact event solver, on request.

By default such a stage's fix says its values were not searched (each analysis
takes tens of milliseconds); with the option the bounded search runs on it.
The check: the value it proposes, written into the netlist, clears the finding
when the board is checked again (no cached result: --no-cache), and the value
is an E12 capacitor (IEC 60063, through the eseries package).
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import eseries

from tests.cli.helpers import drc_script

BOARD = """* harbour signal box: lever-frame key with a two-stage filter
V1 VCC 0 5
R1 VCC K1 10k
C2 K1 0 10n
R2 K1 K1F 22k
C1 K1F 0 {c1}
SW1 K1 0 TACTILE
XU1 K1F K1_N 0 0 0 0 0 0 0 0 0 0 0 VCC 74HC14
.end
"""


def _bounce_fixes(folder: Path, *options: str) -> list[str]:
    proc = drc_script("check", "box.cir", "--no-cache", "--format", "json", *options, cwd=folder)
    assert proc.returncode in (0, 1), proc.stderr
    return [f["fix"] for b in json.loads(proc.stdout)["boards"] for f in b["findings"]
            if f["rule"] == "bounce-window"]


def test_the_exact_stage_is_searched_only_when_asked(tmp_path: Path):
    (tmp_path / "box.cir").write_text(BOARD.format(c1="220n"), encoding="utf-8")
    plain = _bounce_fixes(tmp_path)
    assert plain and all("values not searched" in f and "--thorough-fixes" in f for f in plain)
    thorough = _bounce_fixes(tmp_path, "--thorough-fixes")
    assert thorough and not any("not searched" in f for f in thorough)
    found = {m.group(1) for f in thorough for m in re.finditer(r"C1 220 nF → ([0-9.]+) µF", f)}
    assert len(found) == 1, thorough
    farads = float(found.pop()) * 1e-6
    assert any(abs(farads - x) <= 1e-9 * farads for x in eseries.erange(eseries.E12, 1e-7, 1e-5))
    (tmp_path / "box.cir").write_text(BOARD.format(c1=f"{farads * 1e9:g}n"), encoding="utf-8")
    assert _bounce_fixes(tmp_path) == []
