"""Options shared by several command groups (imports only argparse)."""

from __future__ import annotations

import argparse

__all__ = ["store_json_parent"]


def store_json_parent() -> argparse.ArgumentParser:
    """A parent parser with ``--store PATH`` and ``--json`` for case-store commands."""
    p = argparse.ArgumentParser(add_help=False)
    p.add_argument(
        "--store",
        metavar="PATH",
        help="store directory (default $WORKBENCH_STORE or <repo>/casefiles)",
    )
    p.add_argument("--json", action="store_true", help="print JSON")
    return p
