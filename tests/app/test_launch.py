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


@pytest.mark.slow
def test_sigterm_to_the_launcher_stops_the_streamlit_child(tmp_path):
    # Issue 11 item 12: SIGTERM to `workbench app` left Streamlit serving as an orphan.
    import os
    import signal
    import socket
    import subprocess
    import time
    import urllib.request

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    url = f"http://127.0.0.1:{port}/_stcore/health"
    launcher = subprocess.Popen(
        [sys.executable, "-m", "workbench", "app", "--store", str(tmp_path / "store"),
         "--port", str(port)],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
        env=dict(os.environ, WORKBENCH_STORE=str(tmp_path / "store")),
    )  # fmt: skip

    def serving() -> bool:
        try:
            with urllib.request.urlopen(url, timeout=2) as r:
                return r.status == 200
        except OSError:
            return False

    try:
        deadline = time.monotonic() + 90
        while not serving():
            assert launcher.poll() is None and time.monotonic() < deadline, "app did not start"
            time.sleep(0.3)
        launcher.send_signal(signal.SIGTERM)
        assert launcher.wait(timeout=30) == 0  # a clean stop
        assert not serving()  # the child went with it
    finally:
        if launcher.poll() is None:
            launcher.kill()


def test_the_theme_is_ours_and_primary_actions_are_not_red():
    import tomllib

    cmd = app_command(None, 8765)
    opts = dict(zip(cmd[5::2], cmd[6::2], strict=False))
    primary = opts["--theme.primaryColor"]
    r, g, b = (int(primary[i : i + 2], 16) for i in (1, 3, 5))
    assert not (r > 180 and g < 100 and b < 100)  # not an error red (common practice)
    config = tomllib.loads((Path(__file__).parents[2] / ".streamlit/config.toml").read_text())
    from workbench.app.launch import THEME

    assert config["theme"] == THEME  # the plain `streamlit run` gets the same theme
