"""Config loading and discovery: drc.toml, [tool.drc], errors that name file, line and key."""

from datetime import date
from pathlib import Path

import pytest

from drc.config.loading import discover_config, key_lines, load_config
from drc.errors import ConfigError
from tests.gate.builders import RULE_IDS

FULL = '''
fail-level = "warning"
default-bounce = "5 ms"
eseries = "E12"
only-rules = []
skip-rules = ["resistance-range"]
include = ["lib"]

[tolerances]
resistor = "1 %"
capacitor = 0.1

[[rails]]
net = "+5V"
voltage = 5

[[rails]]
net = "+3V3"
voltage = "3.3 V"
tolerance = "10 %"

[[contacts]]
designator = "SW*"
class = "tactile"
bounce = "10 ms"

[[contacts]]
designator = "K1"
form = "SPDT"

[[parts]]
designator = "U7"
part-number = "74HC14"

[[mcu]]
designator = "U1"
family = "CMOS"
supply = "3.3 V"
supply-pins = [1]

  [[mcu.pins]]
  pin = 5
  pull = "up"
  pull-min = "30 kΩ"
  pull-max = "50k"
  debounce = "20 ms"

  [[mcu.pins]]
  pin = 6
  schmitt = false
  edge-sensitive = true

[limits]
bounce-margin = 1.5
latency-max = "50 ms"

[severity]
pullup-waste = "note"

[[waivers]]
rule = "pullup-waste"
parts-all = ["SW3", "R1*"]
reason = "bench unit, mains powered"
author = "A. Designer"
expires = 2031-06-30

[[waivers]]
rule = "slow-edge"
parts-any = ["SW9", "SW10"]
reason = "legacy"
author = "B. Reviewer"
expires = "next year"
board = "boards/*.cir"
'''

# limit keys map to a dimension or, as rules/limits.toml gives them, to a unit ("s" -> time)
VOCABULARY = dict(rule_ids=RULE_IDS, limit_keys={"bounce-margin": "1", "latency-max": "s"},
                  contact_classes=("tactile", "toggle", "reed"), families=("HC", "CMOS"))


def write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def test_full_drc_toml(tmp_path):
    config = load_config(write(tmp_path, "drc.toml", FULL), **VOCABULARY)
    assert config.fail_level == "warning"
    assert config.default_bounce_s == pytest.approx(5e-3)
    assert config.eseries == "E12"
    assert config.skip_rules == ("resistance-range",)
    assert config.include_folders == (str(tmp_path / "lib"),)
    assert config.tolerances.resistor == pytest.approx(0.01)
    assert config.tolerances.capacitor == pytest.approx(0.1)
    assert config.tolerances.rail == pytest.approx(0.05)  # default kept
    assert [(r.net, r.voltage, r.tolerance) for r in config.rails] == [
        ("+5V", 5.0, pytest.approx(0.05)), ("+3V3", 3.3, pytest.approx(0.1))]
    assert config.contacts[0].contact_class == "tactile"
    assert config.contacts[0].bounce_s == pytest.approx(10e-3)
    assert config.contacts[1].form == "SPDT"
    assert config.parts[0].part_number == "74HC14"
    mcu = config.mcus[0]
    assert (mcu.part, mcu.family, mcu.supply_v, mcu.supply_pins) == ("U1", "CMOS", 3.3, (1,))
    pin5, pin6 = mcu.pins
    assert (pin5.part, pin5.pin, pin5.family, pin5.pull) == ("U1", 5, "CMOS", "up")
    assert (pin5.pull_min_ohms, pin5.pull_max_ohms) == (pytest.approx(30e3), pytest.approx(50e3))
    assert pin5.debounce_s == pytest.approx(20e-3)
    assert pin5.supply_v == 3.3  # inherited from the MCU
    assert (pin6.schmitt, pin6.edge_sensitive) == (False, True)
    assert config.limits == {"bounce-margin": 1.5, "latency-max": pytest.approx(0.05)}
    assert config.severities == {"pullup-waste": "note"}
    first, second = config.waivers
    assert first.expires == date(2031, 6, 30) and first.parts == ("SW3", "R1*") and first.match == "all"
    assert second.parts == ("SW9", "SW10") and second.match == "any"
    assert first.origin.endswith(f"drc.toml:{FULL.splitlines().index('[[waivers]]') + 1}")
    assert second.expires is None  # unreadable date: kept, counts as expired
    assert second.board == "boards/*.cir"


def test_pyproject_tool_drc(tmp_path):
    text = ('[project]\nname = "x"\n\n[tool.drc]\nfail-level = "note"\n\n'
            '[[tool.drc.rails]]\nnet = "VCC"\nvoltage = "5 V"\n')
    config = load_config(write(tmp_path, "pyproject.toml", text), **VOCABULARY)
    assert config.fail_level == "note"
    assert config.rails[0].net == "VCC"


def test_pyproject_errors_name_the_full_key_path_and_line(tmp_path):
    text = '[tool.drc]\n\n[[tool.drc.rails]]\nnet = "VCC"\nvoltage = "3V3"\n'
    with pytest.raises(ConfigError) as caught:
        load_config(write(tmp_path, "pyproject.toml", text))
    assert caught.value.location.line == 5
    assert "tool.drc.rails[0].voltage" in str(caught.value)
    assert "'3.3 V'" in str(caught.value)


def test_pyproject_without_table(tmp_path):
    with pytest.raises(ConfigError, match=r"no \[tool.drc\] table"):
        load_config(write(tmp_path, "pyproject.toml", '[project]\nname = "x"\n'))


@pytest.mark.parametrize("text, line, says", [
    ('fail-levle = "error"\n', 1, "did you mean 'fail-level'"),
    ('[[rails]]\nnet = "+5V"\nvoltage = "3V3"\n', 3, "'3.3 V'"),
    ('[[rails]]\nnet = "+5V"\nvoltage = "5 ms"\n', 3, "not a voltage"),
    ('[[rails]]\nnet = "+5V"\n', 1, "missing required key 'voltage'"),
    ('[[contacts]]\ndesignator = "SW1"\nbounce = 5\n', 3, "has no unit"),
    ('[[contacts]]\ndesignator = "SW1"\nclass = "tactil"\n', 3, "did you mean 'tactile'"),
    ('[[contacts]]\ndesignator = "SW1"\nform = "SPST"\n', 3, "SPST-NO"),
    ('[[parts]]\ndesignator = "U1"\npart_number = "74HC14"\n', 3, "did you mean 'part-number'"),
    ('[[mcu]]\ndesignator = "U1"\nfamily = "CMOS"\n[[mcu.pins]]\npin = 0\n', 5, "whole number >= 1"),
    ('[[mcu]]\ndesignator = "U1"\nfamily = "CMOS"\n[[mcu.pins]]\npin = 3\npull = "up"\n', 6, "pull-min"),
    ('[tolerances]\nresistor = "150 %"\n', 2, "below 100 %"),
    ('only-rules = ["bounce-windw"]\n', 1, "did you mean 'bounce-window'"),
    ('[severity]\nslow-edge = "fatal"\n', 2, "expected one of note, warning, error"),
    ('[severity]\nslow-egde = "note"\n', 2, "did you mean 'slow-edge'"),
    ('[limits]\nbounce-margn = 2\n', 2, "did you mean 'bounce-margin'"),
    ('[limits]\nlatency-max = "5 V"\n', 2, "not a time"),
    ('[[waivers]]\nrule = "slow-edge"\nparts-any = "SW1"\nreason = "r"\nauthor = "a"\nexpires = 2030-01-01\n',
     3, "list of strings"),
    ('[[waivers]]\nrule = "slow-edge"\nparts-all = ["SW1"]\nauthor = "a"\nexpires = 2030-01-01\n',
     1, "missing required key 'reason'"),
    # The old key is ambiguous: refused, with both meanings spelled out.
    ('[[waivers]]\nrule = "slow-edge"\nparts = ["SW1", "SW4"]\nreason = "r"\nauthor = "a"\nexpires = 2030-01-01\n',
     3, "parts-any = [...] to waive each finding that involves one of them, or parts-all"),
    ('[[waivers]]\nrule = "slow-edge"\nparts-any = ["SW1"]\nparts-all = ["SW4"]\nreason = "r"\nauthor = "a"\n'
     'expires = 2030-01-01\n', 1, "exactly one of 'parts-any'"),
    ('eseries = "E25"\n', 1, "E24"),
    ('default-bounce = true\n', 1, "got a boolean"),
    ('rails = "x"\n', 1, "array of tables"),
    ('fail-level = \n', 1, "not valid TOML"),
])
def test_bad_config_is_located(tmp_path, text, line, says):
    path = write(tmp_path, "drc.toml", text)
    with pytest.raises(ConfigError) as caught:
        load_config(path, **VOCABULARY)
    error = caught.value
    assert says in str(error), str(error)
    assert error.location is not None and error.location.file == str(path)
    assert error.location.line == line, str(error)


def test_second_array_element_is_located(tmp_path):
    text = '[[rails]]\nnet = "A"\nvoltage = 5\n\n[[rails]]\nnet = "B"\nvoltage = "x"\n'
    with pytest.raises(ConfigError) as caught:
        load_config(write(tmp_path, "drc.toml", text))
    assert "rails[1].voltage" in str(caught.value) and caught.value.location.line == 7


def test_key_lines_nested_arrays():
    text = '[[mcu]]\nd = 1\n[[mcu.pins]]\npin = 1\n[[mcu.pins]]\npin = 2\n[[mcu]]\n[[mcu.pins]]\npin = 9\n'
    lines = key_lines(text)
    assert lines[("mcu", 0, "pins", 1, "pin")] == 6
    assert lines[("mcu", 1, "pins", 0, "pin")] == 9


def test_discovery_walks_up_to_the_repository_root(tmp_path):
    repo = tmp_path / "repo"
    (repo / ".git").mkdir(parents=True)
    board = write(repo, "hw/panel/board.cir", "* board\n.end\n")
    assert discover_config(board) is None
    write(tmp_path, "drc.toml", "")  # above the repository root: not ours
    assert discover_config(board) is None
    root_config = write(repo, "pyproject.toml", '[tool.drc]\nfail-level = "note"\n')
    assert discover_config(board) == root_config.resolve()
    write(repo, "hw/pyproject.toml", '[project]\nname = "x"\n')  # no [tool.drc]: skipped
    assert discover_config(board) == root_config.resolve()
    nearer = write(repo, "hw/drc.toml", "")
    assert discover_config(board) == nearer.resolve()
    write(repo, "hw/panel/pyproject.toml", '[tool.drc]\n')
    write(repo, "hw/panel/drc.toml", "")
    assert discover_config(board) == (repo / "hw/panel/drc.toml").resolve()  # drc.toml wins


def test_discovery_without_repository_stops_at_filesystem_root(tmp_path):
    board = write(tmp_path, "a/b/c.cir", "")
    found = discover_config(board)
    assert found is None or tmp_path not in found.parents  # nothing placed under tmp_path
    config = write(tmp_path, "a/drc.toml", "")
    assert discover_config(board) == config.resolve()
