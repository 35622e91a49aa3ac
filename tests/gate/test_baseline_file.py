"""The baseline file: what it holds, how it is read back, and where a bad one is wrong.

Sources: the JSON text (RFC 8259) and Python's json module for where a
syntax error sits (line, column, the line's text); the Unicode byte-order
marks of UTF-8 and UTF-16 (the codecs module); the file format documented
in drc/gate/baseline.py and docs/report-schema.md ("format":
"drc-baseline/1", one entry per accepted finding, board paths relative to
the baseline's folder, posix).
"""

from __future__ import annotations

import codecs
import json
import os
import sys

import pytest

from drc.checks.findings import Suppression
from drc.errors import ConfigError
from drc.gate.baseline import BASELINE_FORMAT, baseline_entries, board_key, load_baseline, write_baseline
from tests.gate.builders import board_report, finding, run_report

FULL = {"board": "boards/a.cir", "rule": "slow-edge", "contact": "SW2", "receiver": "U1:3",
        "parts": ["R2", "C1"], "severity": "warning", "message": "m"}
BARE = {"board": "b.cir", "rule": "ambiguous-value", "parts": ["R9"]}


def write(tmp_path, document, encoding="utf-8", bom=b""):
    path = tmp_path / "baseline.json"
    text = document if isinstance(document, str) else json.dumps(document, indent=1)
    path.write_bytes(bom + text.encode(encoding))
    return path


def test_entries_read_back_field_by_field(tmp_path):
    path = write(tmp_path, {"format": BASELINE_FORMAT, "entries": [FULL, BARE]})
    base = load_baseline(path)
    assert base.path == str(path) and base.root == str(tmp_path)
    full, bare = base.entries
    assert (full.board, full.rule, full.contact, full.receiver, full.parts, full.severity, full.message) == \
        ("boards/a.cir", "slow-edge", "SW2", "U1:3", ("C1", "R2"), "warning", "m")
    # Optional keys: no contact or receiver, severity "error", no message.
    assert (bare.contact, bare.receiver, bare.severity, bare.message) == (None, None, "error", "")
    assert full.identity() == ("slow-edge", "SW2", "U1:3", ("C1", "R2"))
    assert bare.identity() == ("ambiguous-value", "", "", ("R9",))


@pytest.mark.parametrize("encoding, bom", [("utf-8", b""), ("utf-8", codecs.BOM_UTF8),
                                           ("utf-16-le", codecs.BOM_UTF16_LE), ("utf-16-be", codecs.BOM_UTF16_BE)])
def test_utf8_and_utf16_with_their_byte_order_marks(tmp_path, encoding, bom):
    document = {"format": BASELINE_FORMAT, "entries": [dict(FULL, message="ΔV über 5 µA")]}
    base = load_baseline(write(tmp_path, json.dumps(document, ensure_ascii=False), encoding, bom))
    assert base.entries[0].message == "ΔV über 5 µA"


def test_bytes_that_are_not_utf8_are_located(tmp_path):
    path = tmp_path / "baseline.json"
    path.write_bytes(b'{"format": "drc-baseline/1",\n "entries": [\n   {"board": "\xff"}]}\n')
    with pytest.raises(ConfigError) as caught:
        load_baseline(path)
    loc = caught.value.location
    assert (loc.file, loc.line, loc.column) == (str(path), 3, 15)  # the \xff byte: line 3, column 15


@pytest.mark.parametrize("text", ['{"format": "drc-baseline/1",\n "entries": [\n  {"board": "a",}\n]}\n',
                                  '{"format": "drc-baseline/1", "entries": [}', "\n\n   nope"])
def test_json_errors_sit_where_the_json_module_says(tmp_path, text):
    path = write(tmp_path, text)
    with pytest.raises(ConfigError) as caught:
        load_baseline(path)
    with pytest.raises(json.JSONDecodeError) as python:
        json.loads(text)
    loc = caught.value.location
    assert (loc.file, loc.line, loc.column) == (str(path), python.value.lineno, python.value.colno)
    assert caught.value.source_line == text.splitlines()[python.value.lineno - 1]
    assert python.value.msg in caught.value.message


def test_nesting_too_deep_is_an_error_not_a_crash(tmp_path):
    with pytest.raises(ConfigError) as caught:
        load_baseline(write(tmp_path, "[" * 100_000 + "]" * 100_000))
    assert caught.value.location.file == str(tmp_path / "baseline.json")


@pytest.mark.parametrize("document, where", [
    ([], None), ({"entries": []}, None), ({"format": "drc-baseline/2", "entries": []}, None),
    ({"format": BASELINE_FORMAT}, None), ({"format": BASELINE_FORMAT, "entries": "x"}, None),
    ({"format": BASELINE_FORMAT, "entries": [BARE, 3]}, "entries[1]"),
    ({"format": BASELINE_FORMAT, "entries": [{"board": "b", "parts": []}]}, "entries[0]"),
    ({"format": BASELINE_FORMAT, "entries": [{"rule": "r", "parts": []}]}, "entries[0]"),
    ({"format": BASELINE_FORMAT, "entries": [{"board": "b", "rule": "r"}]}, "entries[0]"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, board=1)]}, "entries[0]"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, rule=None)]}, "entries[0]"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, parts="R9")]}, "entries[0].parts"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, parts=["R9", 2])]}, "entries[0].parts"),
    ({"format": BASELINE_FORMAT, "entries": [BARE, dict(BARE, severity="fatal")]}, "entries[1].severity"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, contact=5)]}, "entries[0].contact"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, receiver=["U1"])]}, "entries[0].receiver"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, message=1.5)]}, "entries[0].message"),
    ({"format": BASELINE_FORMAT, "entries": [dict(BARE, extra=1)]}, "entries[0]"),
])
def test_a_wrong_document_names_the_file_and_the_entry(tmp_path, document, where):
    path = write(tmp_path, document)
    with pytest.raises(ConfigError) as caught:
        load_baseline(path)
    assert caught.value.location.file == str(path)
    assert caught.value.message.startswith("baseline: ")
    if where is not None:
        assert f"{where}:" in caught.value.message or f"{where} " in caught.value.message


def test_a_folder_is_not_a_baseline(tmp_path):
    with pytest.raises(ConfigError) as caught:
        load_baseline(tmp_path)
    assert caught.value.location.file == str(tmp_path)


def test_written_file_is_sorted_json_with_paths_relative_to_its_folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "out").mkdir()
    findings = [finding("slow-edge", "SW2", "U1:3", ("R2", "C1"), board="boards/b.cir"),
                finding("bounce-window", "SW1", "U1:1", ("R1",), board="boards/a.cir"),
                finding("bounce-window", "SW1", "U1:1", ("R1",), board="boards/a.cir")]
    write_baseline(tmp_path / "out" / "base.json", run_report([board_report("boards/a.cir", findings=findings)]))
    text = (tmp_path / "out" / "base.json").read_text(encoding="utf-8")
    assert text.endswith("}\n")
    document = json.loads(text)
    assert document["format"] == BASELINE_FORMAT
    entries = document["entries"]
    assert [(e["board"], e["rule"]) for e in entries] == [
        ("../boards/a.cir", "bounce-window"), ("../boards/a.cir", "bounce-window"), ("../boards/b.cir", "slow-edge")]
    assert entries[2]["parts"] == ["C1", "R2"] and entries[2]["contact"] == "SW2" and entries[2]["receiver"] == "U1:3"
    assert text == json.dumps(document, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
    again = load_baseline(tmp_path / "out" / "base.json")
    assert [e.board for e in again.entries] == [e["board"] for e in entries]


def test_waived_and_annotated_findings_stay_out_and_baselined_ones_stay_in():
    keep = finding("slow-edge")
    chosen = baseline_entries([keep, finding(suppression=Suppression.WAIVER),
                               finding(suppression=Suppression.ANNOTATION),
                               finding("bounce-window", suppression=Suppression.BASELINE)])
    assert [e.rule for e in chosen] == ["bounce-window", "slow-edge"]


def test_board_keys(tmp_path):
    (tmp_path / "boards").mkdir()
    assert board_key("./boards/a.cir", None) == "boards/a.cir"
    assert board_key(str(tmp_path / "boards" / "a.cir"), tmp_path) == "boards/a.cir"
    assert board_key(str(tmp_path / "a.cir"), tmp_path / "boards") == "../a.cir"


def test_board_keys_of_names_that_are_not_utf8():
    # A file name is bytes on Linux; Python hands a byte that is not UTF-8 over as a lone
    # surrogate (PEP 383, os.fsdecode), which a JSON baseline cannot hold. The key writes
    # such a byte as \xNN (the codecs module's "backslashreplace"), and keeps UTF-8 text.
    odd = os.fsdecode(b"caf\xe9.cir")  # Latin-1 e-acute: not UTF-8
    assert board_key(odd, None) == "caf\\xe9.cir"
    assert board_key("café.cir", None) == "café.cir"  # UTF-8 text stays as it is
    key = board_key(os.fsdecode(b"boards/\xff\xfe/x.cir"), None)
    assert key == "boards/\\xff\\xfe/x.cir"
    json.dumps(key).encode("utf-8")  # text a JSON file can hold (a lone surrogate raises here)


def test_a_number_too_long_to_read_is_located(tmp_path):
    # Python's int() refuses more than sys.get_int_max_str_digits() digits (4300 by default,
    # since 3.11); json.loads lets that ValueError through. The error points at the line and
    # column where the number starts (here line 3, column 12, counted by hand below).
    digits = "7" * (sys.get_int_max_str_digits() + 1)
    text = "{\n" + f' "format": "{BASELINE_FORMAT}",\n "entries": {digits}\n' + "}\n"
    path = write(tmp_path, text)
    with pytest.raises(ConfigError) as err:
        load_baseline(path)
    where = err.value.location
    assert (where.file, where.line, where.column) == (str(path), 3, len(' "entries": ') + 1)
    assert str(sys.get_int_max_str_digits()) in err.value.message
