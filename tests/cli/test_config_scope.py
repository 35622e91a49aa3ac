"""Config entries scoped to boards, through the console script: one root config, two boards
that both have a U5 (a microcontroller on one, a 74HC14 on the other).

No outside reference applies to scoping itself; the stages it lets through
are checked elsewhere against ngspice. What is checked here is the contract:
a scoped entry applies to its boards only, and an unscoped entry that
overrides a part number written in the netlist is a located warning.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.cli.helpers import drc_script

BOARD_A = """board a: a key into a microcontroller
V1 vcc 0 DC 3.3
R1 vcc key 10k
SW1 key 0 TACTILE
XU5 vcc 0 key MYMCU
.end
"""
BOARD_B = """board b: a key into a Schmitt inverter
V1 vcc 0 DC 5
R1 vcc n1 10k
R2 n1 in 22k
C1 in 0 1.2u
SW1 n1 0 TACTILE
XU5 in out 0 0 0 0 0 0 0 0 0 0 0 vcc 74HC14
.end
"""
MCU = """[[mcu]]
designator = "U5"
family = "MCU-3V3"
supply = "3.3 V"
supply-pins = [1]
ground-pins = [2]
{scope}
  [[mcu.pins]]
  pin = 3
  debounce = "20 ms"
"""


def _repository(tmp_path: Path, scope: str) -> Path:
    (tmp_path / ".git").mkdir()
    (tmp_path / "boards").mkdir()
    (tmp_path / "boards" / "board_a.cir").write_text(BOARD_A)
    (tmp_path / "boards" / "board_b.cir").write_text(BOARD_B)
    (tmp_path / "drc.toml").write_text(MCU.format(scope=scope))
    return tmp_path


def _stages(tmp_path: Path) -> tuple[dict[str, list[str]], dict[str, list[str]]]:
    proc = drc_script("check", "boards", "--no-fixes", "--format", "json", cwd=tmp_path)
    assert proc.returncode in (0, 1), proc.stderr
    boards = json.loads(proc.stdout)["boards"]
    kinds = {Path(b["path"]).name: [s["kind"] for s in b["stages"]] for b in boards}
    notes = {Path(b["path"]).name: b["diagnostics"] for b in boards}
    return kinds, notes


@pytest.mark.parametrize("scope", ['board = "boards/board_a.cir"', 'board = ["board_a.cir"]',
                                   'board = "boards/*_a.cir"'])
def test_a_scoped_entry_applies_to_its_boards_only(tmp_path: Path, scope: str):
    kinds, notes = _stages(_repository(tmp_path, scope))
    assert kinds == {"board_a.cir": ["firmware"], "board_b.cir": ["rc-schmitt"]}
    assert not any("overriding" in n for n in notes["board_b.cir"])


def test_an_unscoped_entry_that_overrides_a_written_part_is_a_warning(tmp_path: Path):
    repository = _repository(tmp_path, "")
    kinds, notes = _stages(repository)
    assert kinds["board_a.cir"] == ["firmware"]  # MYMCU is no part the library knows: no warning
    assert not any("overriding" in n for n in notes["board_a.cir"])
    (warning,) = [n for n in notes["board_b.cir"] if "overriding" in n]
    assert warning.startswith("boards/board_b.cir:7:1: U5: the [[mcu]] entry at ")
    assert "drc.toml:1" in warning and "overriding the 74HC14 written in the netlist" in warning
    assert warning.endswith("scope the entry with board = [...] if it is meant for another board")
    text = drc_script("check", "boards", "--no-fixes", cwd=repository).stdout
    assert "warning: boards/board_b.cir:7:1: U5: the [[mcu]] entry" in text


def test_a_scoped_entry_that_overrides_its_own_board_is_a_warning_without_the_advice(tmp_path: Path):
    """Scoped to board b on purpose: still an override (a warning), but scoping is done."""
    _kinds, notes = _stages(_repository(tmp_path, 'board = "boards/board_b.cir"'))
    (warning,) = [n for n in notes["board_b.cir"] if "overriding" in n]
    assert warning.endswith("overriding the 74HC14 written in the netlist"), warning


def test_a_parts_entry_that_names_the_written_part_is_no_override(tmp_path: Path):
    repository = _repository(tmp_path, 'board = "boards/board_a.cir"')
    with (repository / "drc.toml").open("a") as config:
        config.write('\n[[parts]]\ndesignator = "U5"\npart-number = "SN74HC14N"\n'
                     '\n[[parts]]\ndesignator = "U5"\npart-number = "74HC04"\nboard = "nothing/*.cir"\n')
    _kinds, notes = _stages(repository)
    assert not any("overriding" in n for n in notes["board_b.cir"])
    with (repository / "drc.toml").open("a") as config:
        config.write('\n[[parts]]\ndesignator = "U5"\npart-number = "74HC04"\n')
    _kinds, notes = _stages(repository)
    assert any("[[parts]] entry" in n and "makes it a 74HC04, overriding the 74HC14" in n
               for n in notes["board_b.cir"]), notes
