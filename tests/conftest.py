"""Shared fixtures: tiny inline tables and the paths of reference data."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
REFERENCE = ROOT / "data" / "reference"
TEST_DATA = Path(__file__).resolve().parent / "data"


@pytest.fixture
def reference_dir() -> Path:
    return REFERENCE


@pytest.fixture
def test_data_dir() -> Path:
    return TEST_DATA
