"""Command-line face of the workbench.

Each command group lives in its own module under ``workbench.cli`` and exposes
``register(subparsers)``. Command modules import only ``argparse`` at module
level and defer heavy imports (polars, scipy, streamlit) into their handlers,
so ``workbench match`` never loads the web front end.

Exit codes: 0 success; 1 unexpected internal error; 2 bad input or usage;
3 reference data unusable; 4 verification failed (tampering, bad signature);
5 refused by a case-store rule; 6 record not found.
"""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence

__all__ = ["COMMAND_MODULES", "build_parser", "main"]

#: Command modules, in the order their groups appear in ``--help``.
COMMAND_MODULES: tuple[str, ...] = (
    "demo",
    "refsets",
    "peaks",
    "match",
    "case",
    "item",
    "custody",
    "measure",
    "analyse",
    "bundle",
    "keys",
    "findings",
    "collection",
    "compare",
    "materials",
    "map",
    "batch",
    "app",
)


def _manifest_version_quick() -> str | None:
    """``data_version`` read straight from the manifest, or None if anything is unusual.

    Importing :mod:`workbench.refdata` loads polars, scipy and the physics
    package (most of a second), far more than printing a version needs. The
    paths are those of :func:`workbench.refdata.manifest.default_root`; when
    this quick look fails, the full loader runs and gives its own message.
    """
    import json
    import os
    from pathlib import Path

    import workbench

    env = os.environ.get("WORKBENCH_REFERENCE_SETS")
    package = Path(workbench.__file__).resolve().parent
    roots = [Path(env)] if env else [package.parent / "reference_sets", package / "_reference_sets"]
    for root in roots:
        try:
            manifest = json.loads((root / "manifest.json").read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        ok = isinstance(manifest, dict) and isinstance(manifest.get("sets"), list)
        version = manifest.get("data_version") if ok else None
        return version if isinstance(version, str) else None
    return None


def _version_text() -> str:
    from workbench import __version__

    data = _manifest_version_quick()
    if data is None:
        from workbench.refdata.manifest import data_version

        try:
            data = data_version()
        except Exception as exc:  # the version line must print even with broken data
            data = f"unavailable ({exc})"
    return f"workbench {__version__}\nreference data {data}"


class _VersionAction(argparse.Action):
    def __init__(self, option_strings: Sequence[str], dest: str, **kwargs: object) -> None:
        super().__init__(
            option_strings, dest, nargs=0, help="print code and reference-data versions"
        )

    def __call__(self, parser, namespace, values, option_string=None):
        print(_version_text())
        parser.exit(0)


def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """Build the top-level parser with every available command group.

    Parameters
    ----------
    command : str, optional
        The command about to run. When a command module of that name
        registers a command of that name, only that module is loaded:
        importing and registering all the groups costs about 15 ms of every
        start-up (``workbench peaks`` takes a few tenths of a second in all).
        Otherwise, and by default, every group is registered.

    Returns
    -------
    argparse.ArgumentParser
        The parser; each sub-command sets ``func`` on the namespace.
    """
    names = (command,) if command in COMMAND_MODULES else COMMAND_MODULES
    parser = argparse.ArgumentParser(
        prog="workbench",
        description="Line-matching workbench: element identification from line spectra, "
        "case files with chain of custody, and signed findings sheets.",
    )
    parser.add_argument("--version", action=_VersionAction)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in names:
        try:
            module = importlib.import_module(f"workbench.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name == f"workbench.cli.{name}":
                continue  # command group not built yet
            raise
        module.register(sub)
    if len(names) == 1 and command not in sub.choices:
        return build_parser()  # the module registers other names: load every group
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the CLI.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name; ``sys.argv[1:]`` when omitted.

    Returns
    -------
    int
        The process exit code (see module docstring).
    """
    from workbench.errors import WorkbenchError

    argv = sys.argv[1:] if argv is None else list(argv)
    parser = build_parser(argv[0] if argv else None)
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        build_parser().print_help()  # the help of every group, as without a command
        return 2
    try:
        return int(args.func(args) or 0)
    except WorkbenchError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("interrupted; nothing further was written", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
