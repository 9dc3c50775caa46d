"""Fixtures for the findings tests (the data live in findings_data.py)."""

from __future__ import annotations

from typing import Any

import pytest

from tests.findings.findings_data import make_content_kwargs


@pytest.fixture
def content_kwargs() -> dict[str, Any]:
    return make_content_kwargs()
