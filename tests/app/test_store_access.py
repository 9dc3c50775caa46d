"""Tests of workbench/app/store_access.py."""

from __future__ import annotations

from pathlib import Path

from workbench.app import store_access as sv


def test_store_argument_is_found_among_other_arguments():
    assert sv.store_root_from_argv(["-q", "--store", "/tmp/x", "tests"]) == Path("/tmp/x")
    assert sv.store_root_from_argv(["-q"]) is None
