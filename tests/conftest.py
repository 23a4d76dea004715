"""Shared test helpers: where the data files are."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "data"
SAMPLES = ROOT / "sample_schedules"


@pytest.fixture
def data_dir() -> Path:
    return DATA


@pytest.fixture
def samples_dir() -> Path:
    return SAMPLES
