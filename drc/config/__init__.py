"""The board configuration: `drc.toml` or `[tool.drc]` in pyproject.toml.

`settings` holds the frozen `Config` record; `loading` finds and reads the file.
"""
