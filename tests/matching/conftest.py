"""Fixtures for the matching tests."""

import pytest

from tests.matching.invented import FakeSet, invented_table


@pytest.fixture
def invented_set() -> FakeSet:
    return FakeSet("invented", invented_table())
