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


def test_a_254_byte_name_gets_a_shortened_temporary_name(tmp_path, monkeypatch):
    # The temporary file's ".NAME.XXXXXXXX.tmp" must fit the folder's name limit too.
    name = "r" * 250 + ".txt"               # 254 bytes, legal on ext4, tmpfs, xfs, btrfs
    created: list[str] = []
    real_open = os.open

    def recording_open(path, flags, *args):
        created.append(os.path.basename(path))
        return real_open(path, flags, *args)

    monkeypatch.setattr(os, "open", recording_open)
    write_atomic(tmp_path / name, "report\n")
    assert (tmp_path / name).read_text() == "report\n"
    assert created and all(len(os.fsencode(n)) <= 255 for n in created), created
    assert os.listdir(tmp_path) == [name]


def test_plain_symbols_where_the_encoding_lacks_them():
    from drc.atomic import PLAIN_ERRORS
    text = "R1 10 kΩ, 326 µs, SW1 → U1:1, ±5 %, τ, ┌─┐│, é"
    assert text.encode("ascii", PLAIN_ERRORS) == \
        b"R1 10 kohm, 326 us, SW1 -> U1:1, +/-5 %, tau, +-+|, \\u00e9"
    # Latin-1 has µ, ± and é: only what it lacks is replaced.
    assert text.encode("latin-1", PLAIN_ERRORS).decode("latin-1") == \
        "R1 10 kohm, 326 µs, SW1 -> U1:1, ±5 %, tau, +-+|, é"
    # A byte of a name that is not UTF-8 (a lone surrogate) becomes U+FFFD, never an error.
    assert "\udcff.cir".encode("utf-8", PLAIN_ERRORS) == "\ufffd.cir".encode("utf-8")


def test_printable_names_keep_to_one_line():
    from drc.errors import SourceLocation, printable
    assert printable("new\nline\t\x1b.cir") == "new\\nline\\t\\x1b.cir"
    assert printable("\udcff.cir") == "\\xff.cir"
    assert printable("plain Ω.cir") == "plain Ω.cir"
    assert str(SourceLocation("a\nb.cir", 3, 1)) == "a\\nb.cir:3:1"


def test_two_outputs_onto_one_file_are_refused_before_anything_is_written(tmp_path):
    from drc.atomic import check_outputs
    (tmp_path / "real.json").write_text("old\n")
    (tmp_path / "link.json").symlink_to("real.json")
    with pytest.raises(UsageError, match="both write"):
        check_outputs([("-o json:real.json", tmp_path / "real.json"),
                       ("--write-baseline", tmp_path / "link.json")])
    with pytest.raises(UsageError, match="both write"):
        check_outputs([("-o json:new.json", tmp_path / "new.json"),
                       ("-o sarif:./new.json", tmp_path / "." / "new.json")])
    check_outputs([("-o json:/dev/null", "/dev/null"), ("-o sarif:/dev/null", "/dev/null")])
    assert (tmp_path / "real.json").read_text() == "old\n"
