"""Fixtures shared by several test modules."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parent.parent / "tuning" / "demo"


@pytest.fixture()
def demo(tmp_path):
    """A copy of the invented demo scenario (tuning/demo/) in a fresh folder; the folder."""
    for f in DEMO.iterdir():
        if f.is_file():
            shutil.copy(f, tmp_path / f.name)
    return tmp_path
