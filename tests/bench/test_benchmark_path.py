"""The benchmark path works and measures the right thing (never a time).

Checks, on a 10k-element generated board (benchmarks/generate.py, the
ngspice-safe variant the benchmark times): the full command line
(`python -m drc.cli check FILE --format json`, as benchmarks/run.py runs it)
finds every generated contact's stage, every stage kind the generator
writes, and emits JSON that parses. The expected counts come from the
generator's own pattern, not from drc. The batched stage analysis the
benchmark times agrees with the one-by-one analysis (same StageResults).
"""

import json
import subprocess
import sys
from collections import Counter
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "benchmarks"))
import generate as gen  # noqa: E402


@pytest.fixture(scope="module")
def board(tmp_path_factory):
    path = tmp_path_factory.mktemp("bench") / "board10k.cir"
    path.write_text(gen.generate(10_000, 1, ngspice_safe=True), encoding="utf-8")
    return path


def _expected_kinds(contacts: int) -> Counter:
    kinds = Counter(gen._KIND_PATTERN[i % len(gen._KIND_PATTERN)] for i in range(contacts))
    # A changeover contact into a latch is one stage per throw (NC and NO): two per latch.
    kinds["latch"] *= 2
    return kinds


def test_check_finds_every_generated_stage_and_json_parses(board):
    proc = subprocess.run([sys.executable, "-m", "drc.cli", "check", str(board), "--format", "json",
                           "--no-fixes", "--report-only"], capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stderr[-2000:]
    doc = json.loads(proc.stdout)
    (b,) = doc["boards"]
    contacts = gen.default_contacts(10_000)
    assert b.get("error") is None
    stages = b["stages"]
    got = Counter(s["kind"] for s in stages)
    assert got == _expected_kinds(contacts)
    named = {s["contact"] for s in stages}
    assert named == {f"SW{i}" for i in range(1, contacts + 1)}


def test_batched_analysis_equals_one_by_one(board):
    from drc.analysis.receiver import receiver_electrical
    from drc.analysis.stage_analysis import analyse_stage, analyse_stages
    from drc.board.classify import classify
    from drc.board.recognise import stages_for_board
    from drc.config.settings import Config
    from drc.netlist.reader import read_netlist
    from drc.pipeline import library
    lib = library()
    config = Config()
    netlist = read_netlist(str(board), keep_as_part=lib.is_known_subcircuit)
    stages = list(stages_for_board(classify(netlist, lib, config, default_bounce_s=config.default_bounce_s),
                                   config))[:120]

    def rx(s):
        return receiver_electrical(lib, s.receiver.family, s.receiver.supply_v, s.receiver.schmitt)

    assert analyse_stages(stages, rx) == [analyse_stage(s, rx(s)) for s in stages]


def test_phase_profile_names_every_phase_of_a_demo_check():
    """benchmarks/phases.py times the pipeline's own phases: on a demo board with fixes on,
    every phase is printed once, in the pipeline's order, and the report is not (it goes
    to the null device). Times are not checked."""
    board = ROOT / "boards" / "lx24" / "front_panel.cir"
    proc = subprocess.run([sys.executable, str(ROOT / "benchmarks" / "phases.py"), str(board), "--with-fixes"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    names = [line.split()[0] for line in proc.stdout.splitlines()[1:]]
    assert names == ["start-up", "read", "classify", "survey", "analyse", "rules", "fixes", "report",
                     "writing,", "total"]
    assert '"boards"' not in proc.stdout
