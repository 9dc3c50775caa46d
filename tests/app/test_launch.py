"""Tests of workbench/app/launch.py and the 'workbench app' command (workbench/cli/app.py)."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import pytest

from workbench.app.launch import MAIN_SCRIPT, app_command, launch
from workbench.errors import InputError


def test_command_binds_to_loopback_headless_without_usage_statistics(tmp_path):
    cmd = app_command(tmp_path, 8765)
    assert cmd[:4] == [sys.executable, "-m", "streamlit", "run"]
    assert Path(cmd[4]) == MAIN_SCRIPT and MAIN_SCRIPT.is_file()
    opts = dict(zip(cmd[5:-3:2], cmd[6:-3:2], strict=True))
    assert opts["--server.address"] == "127.0.0.1"  # loopback only (brief requirement)
    assert opts["--server.port"] == "8765"
    assert opts["--server.headless"] == "true"
    assert opts["--browser.gatherUsageStats"] == "false"
    assert cmd[-3:] == ["--", "--store", str(tmp_path.resolve())]


def test_bad_port_is_refused_before_anything_starts():
    with pytest.raises(InputError, match="port"):
        launch(None, 70000)


def test_cli_group_registers_app_with_defaults():
    from workbench.cli import app as cli_app

    parser = argparse.ArgumentParser()
    cli_app.register(parser.add_subparsers())
    args = parser.parse_args(["app", "--port", "9000"])
    assert args.func is cli_app.run and args.port == 9000 and args.store is None
