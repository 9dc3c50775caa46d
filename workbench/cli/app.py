"""``workbench app``: start the browser front end on 127.0.0.1.

Exit codes: 0 stopped cleanly; 2 bad options; otherwise Streamlit's own code.
"""

from __future__ import annotations

import argparse
from pathlib import Path

__all__ = ["register", "run"]


def register(sub: argparse._SubParsersAction) -> None:
    """Add the ``app`` command."""
    p = sub.add_parser(
        "app",
        help="start the browser front end (Streamlit) on 127.0.0.1",
        description=__doc__,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--store", type=Path, help="case-store directory (default $WORKBENCH_STORE)")
    p.add_argument("--port", type=int, default=8501, help="port on 127.0.0.1 (default 8501)")
    p.add_argument("--open", action="store_true", help="open a browser tab")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Handler of ``workbench app``."""
    from workbench.app.launch import launch

    return launch(args.store, args.port, open_browser=args.open)
