"""Report formats of a run: terminal text, JSON, SARIF 2.1.0, JUnit XML and HTML.

Every format reads the same records (`run_report`: RunReport, BoardReport)
and computes nothing; each one is a formatter in its own module, found by
name through `formats`, and imports only what it needs. Nothing is imported
here, so that choosing a format costs only that format's imports.
"""
