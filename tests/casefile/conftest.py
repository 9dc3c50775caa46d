"""Shared fixtures for the case-store tests (invented cases, labs and people)."""

from __future__ import annotations

from pathlib import Path

import pytest

from workbench.casefile import CaseStore


@pytest.fixture
def store(tmp_path: Path):
    with CaseStore.open(tmp_path / "store") as s:
        yield s
