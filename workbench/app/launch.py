"""Start the Streamlit app on 127.0.0.1 in a child process (stdlib only at import)."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

__all__ = ["MAIN_SCRIPT", "app_command", "launch"]

#: The app's entry script.
MAIN_SCRIPT: Path = Path(__file__).resolve().parent / "main.py"


def app_command(store: Path | None, port: int, *, open_browser: bool = False) -> list[str]:
    """The command line that runs the app (loopback only, no usage statistics).

    Parameters
    ----------
    store : pathlib.Path or None
        Case-store directory passed to the app (``--store``); default resolution when None.
    port : int
        TCP port on 127.0.0.1.
    open_browser : bool
        Let Streamlit open a browser tab.

    Returns
    -------
    list of str
    """
    cmd = [
        sys.executable, "-m", "streamlit", "run", str(MAIN_SCRIPT),
        "--server.address", "127.0.0.1",
        "--server.port", str(int(port)),
        "--server.headless", "false" if open_browser else "true",
        "--browser.gatherUsageStats", "false",
        "--server.fileWatcherType", "none",
        # A laboratory tool: no "Deploy" button or developer menu in the toolbar.
        "--client.toolbarMode", "viewer",
    ]  # fmt: skip
    if store is not None:
        cmd += ["--", "--store", str(Path(store).expanduser().resolve())]
    return cmd


def launch(store: Path | None, port: int, open_browser: bool = False) -> int:
    """Run the app until it stops (Ctrl-C); return its exit code.

    Parameters
    ----------
    store : pathlib.Path or None
        Case-store directory; also exported as ``WORKBENCH_STORE`` to the child.
    port : int
        Port on 127.0.0.1 (1–65535).
    open_browser : bool
        Open a browser tab.

    Returns
    -------
    int
        0 after a clean stop, else the child's exit code.
    """
    from workbench.errors import InputError

    if not 0 < int(port) < 65536:
        raise InputError(f"port {port} is not a TCP port", "give a port between 1024 and 65535")
    env = dict(os.environ)
    if store is not None:
        env["WORKBENCH_STORE"] = str(Path(store).expanduser().resolve())
    print(f"Workbench app on http://127.0.0.1:{int(port)}  (Ctrl-C to stop)", flush=True)
    proc = subprocess.Popen(app_command(store, port, open_browser=open_browser), env=env)
    try:
        return int(proc.wait())
    except KeyboardInterrupt:
        proc.terminate()
        try:
            proc.wait(timeout=10)
        except subprocess.TimeoutExpired:
            proc.kill()
        return 0
