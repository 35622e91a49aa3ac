from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
BOARDS = ROOT / "boards"


@pytest.fixture
def boards_dir() -> Path:
    return BOARDS
