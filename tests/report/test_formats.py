"""The one formatter interface: every format of `drc check` is found by its name and
renders a run to text; the text format can also print to a console."""

import io

import pytest
from rich.console import Console

from drc.report.formats import FORMATS, ConsoleFormatter, Formatter, RenderOptions, formatter
from tests.gate.builders import board_report, run_report, sample_findings


def test_the_formats_of_the_command_line():
    assert FORMATS == ("text", "json", "sarif", "junit", "html")


@pytest.mark.parametrize("name", FORMATS)
def test_every_format_is_a_formatter_found_by_name(name, tmp_path):
    chosen = formatter(name)
    assert isinstance(chosen, Formatter) and chosen.name == name
    run = run_report([board_report(findings=sample_findings())])
    text = chosen.render(run, RenderOptions(working_dir=tmp_path))
    assert isinstance(text, str) and run.boards[0].path in text


def test_text_prints_to_a_wide_console_what_it_renders():
    text = formatter("text")
    assert isinstance(text, ConsoleFormatter)
    run = run_report([board_report(findings=sample_findings())])
    buffer = io.StringIO()
    text.print_to(Console(file=buffer, width=1000, color_system=None), run, RenderOptions())
    assert [line.rstrip() for line in buffer.getvalue().splitlines()] == \
        text.render(run, RenderOptions()).splitlines()


def test_an_unknown_format_is_a_key_error():
    with pytest.raises(KeyError):
        formatter("pdf")
