"""Start the Streamlit app on 127.0.0.1 in a child process (stdlib only at import)."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
from pathlib import Path

__all__ = ["MAIN_SCRIPT", "THEME", "app_command", "launch"]

#: The app's entry script.
MAIN_SCRIPT: Path = Path(__file__).resolve().parent / "main.py"


#: The app's own calm theme (also in .streamlit/config.toml for a plain ``streamlit run``):
#: a muted teal for primary actions, so nothing that is not an error looks like one.
THEME: dict[str, str] = {
    "base": "light",
    "primaryColor": "#2f6f73",
    "backgroundColor": "#fbfbf8",
    "secondaryBackgroundColor": "#eef1ef",
    "textColor": "#1f2a30",
}


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
    for key, value in THEME.items():
        cmd += [f"--theme.{key}", value]
    if store is not None:
        cmd += ["--", "--store", str(Path(store).expanduser().resolve())]
    return cmd


def launch(store: Path | None, port: int, open_browser: bool = False) -> int:
    """Run the app until it stops (Ctrl-C, SIGTERM or SIGHUP); return its exit code.

    SIGTERM and SIGHUP are forwarded to the Streamlit child and waited for, so
    stopping the launcher always stops the server.

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

    # A service manager stops us with SIGTERM (or SIGHUP when the terminal closes): pass
    # the signal on to Streamlit and wait for it, so no server is left serving as an orphan.
    def _forward(signum: int, _frame: object) -> None:
        if proc.poll() is None:
            proc.send_signal(signum)

    forwarded = (signal.SIGTERM, signal.SIGHUP)
    previous = {s: signal.signal(s, _forward) for s in forwarded}
    try:
        code = int(proc.wait())
        return 0 if code in (0, -signal.SIGTERM, -signal.SIGHUP) else code
    except KeyboardInterrupt:
        return 0
    finally:
        for s, handler in previous.items():
            signal.signal(s, handler)
        if proc.poll() is None:
            proc.terminate()
            try:
                proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()
