"""Atomic writes: whole file or nothing, never over an input file."""

import os

import pytest

from drc.atomic import write_atomic
from drc.errors import UsageError


def test_writes_and_replaces(tmp_path):
    target = tmp_path / "out.json"
    write_atomic(target, "first\n")
    write_atomic(target, "second ✓\n")
    assert target.read_text(encoding="utf-8") == "second ✓\n"
    assert os.listdir(tmp_path) == ["out.json"]  # no temporary file left behind


def test_refuses_input_files_also_through_links(tmp_path):
    netlist = tmp_path / "board.cir"
    netlist.write_text("* board\n")
    link = tmp_path / "link.cir"
    link.symlink_to(netlist)
    for target in (netlist, link, tmp_path / "." / "board.cir"):
        with pytest.raises(UsageError, match="input file"):
            write_atomic(target, "x", inputs=[str(netlist)])
    assert netlist.read_text() == "* board\n"


def test_missing_folder_is_a_usage_error(tmp_path):
    with pytest.raises(UsageError, match="cannot write"):
        write_atomic(tmp_path / "no" / "such" / "out.json", "x")
