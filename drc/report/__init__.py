"""Report formats of a run: terminal text, JSON, SARIF 2.1.0 and JUnit XML.

Every format reads the same `RunReport` (report.model) and computes nothing;
each renderer is in its own module and imports only what it needs.
"""

from drc.report.run_report import CAUTION, BaselineInfo, BoardReport, RunReport

__all__ = ["CAUTION", "BaselineInfo", "BoardReport", "RunReport"]
