"""The reader's resource limits, one record shared by every step of reading.

Loading, include handling, expression parsing and flattening each stop at
one of these limits with a located error that names the field to raise
(`limit_hint`). The record is re-exported by drc.netlist.reader, its public
home.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class ReaderOptions:
    """Resource limits of the reader; each error names the field to raise."""

    max_include_depth: int = 16
    max_subckt_depth: int = 32
    max_elements: int = 1_000_000
    max_file_bytes: int = 256 * 1024 * 1024
    max_line_length: int = 100_000
    max_expression_depth: int = 64
    max_expression_work: int = 10_000
    include_folders: tuple[str, ...] = ()
