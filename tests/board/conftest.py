"""Fixtures: the shipped library (rules/) and a board builder from netlist text
read by the real reader."""

from __future__ import annotations

import pytest

from drc.board.classify import classify
from drc.config.settings import Config
from drc.library.catalogue import load_library
from drc.netlist.reader import read_netlist_text


@pytest.fixture(scope="session")
def lib():
    return load_library()


@pytest.fixture
def board_of(lib):
    def make(text: str, config: Config | None = None, **kwargs):
        netlist = read_netlist_text(text, path="<test>", keep_as_part=lib.is_known_subcircuit)
        return classify(netlist, lib, config or Config(), **kwargs)
    return make
