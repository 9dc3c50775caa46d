"""Options shared by several command groups (imports only argparse)."""

from __future__ import annotations

import argparse

__all__ = ["add_store_option", "store_json_parent"]


_STORE_HELP = "store directory (default $WORKBENCH_STORE or <repo>/casefiles)"


def add_store_option(p: argparse.ArgumentParser) -> None:
    """Add ``--store PATH`` to one parser."""
    p.add_argument("--store", metavar="PATH", help=_STORE_HELP)


def store_json_parent() -> argparse.ArgumentParser:
    """A parent parser with ``--store PATH`` and ``--json`` for case-store commands."""
    p = argparse.ArgumentParser(add_help=False)
    add_store_option(p)
    p.add_argument("--json", action="store_true", help="print JSON")
    return p
