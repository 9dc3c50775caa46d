"""Options shared by several command groups (argparse at import; the rest when used)."""

from __future__ import annotations

import argparse

__all__ = [
    "INPUT_FORMATS_TEXT",
    "add_block_option",
    "add_columns_option",
    "add_store_option",
    "print_json",
    "read_file",
    "refuse_passphrase_option",
    "store_json_parent",
]


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


def print_json(data: object) -> None:
    """Print ``data`` as indented JSON with sorted keys (the ``--json`` output)."""
    import json

    print(json.dumps(data, indent=2, sort_keys=True, ensure_ascii=False))


def read_file(path: str, what: str, remedy: str = "check the path") -> bytes:
    """Read a file the user named; an unreadable one is an InputError naming it."""
    from workbench.errors import InputError

    try:
        with open(path, "rb") as fh:
            return fh.read()
    except OSError as exc:
        raise InputError(f"cannot read {what} {path} ({exc.strerror})", remedy) from exc


class _RefusePassphrase(argparse.Action):
    """``--passphrase VALUE``: refused, and the value is never printed (argparse would echo it)."""

    def __call__(self, parser, namespace, values, option_string=None):
        parser.error(
            f"{option_string} is not accepted: a passphrase on the command line ends up in "
            "shell history and process lists (the value was not printed); use "
            "--passphrase-file FILE, the WORKBENCH_PASSPHRASE variable, or the prompt"
        )


def refuse_passphrase_option(p: argparse.ArgumentParser) -> None:
    """Catch ``--passphrase``/``--password`` on a parser so the secret is never echoed."""
    p.add_argument(
        "--passphrase", "--password", nargs="?", action=_RefusePassphrase, help=argparse.SUPPRESS
    )


#: The formats the readers take, as ``workbench.io.INPUT_FORMATS`` words them
#: (a test keeps the two equal; not imported: the readers' import would slow
#: every command's start-up). For the help of ``match`` and ``peaks``.
INPUT_FORMATS_TEXT = (
    "CSV/TSV/text, Excel/OpenDocument workbooks, JCAMP-DX, Parquet, FITS, JSON, EMSA/MAS"
)


def _columns_arg(text: str) -> dict[str, str]:
    """``ROLE=HEADER[,ROLE=HEADER...]`` → ``{role: header}`` (io.columns.parse_column_choices)."""
    from workbench.errors import ColumnMappingError
    from workbench.io.columns import parse_column_choices

    try:
        return parse_column_choices(text)
    except ColumnMappingError as exc:
        raise argparse.ArgumentTypeError(f"{exc.problem}; {exc.remedy}") from None


def add_columns_option(p: argparse.ArgumentParser) -> None:
    """Add ``--columns ROLE=HEADER,...``: which table column plays which role."""
    p.add_argument(
        "--columns",
        type=_columns_arg,
        metavar="ROLE=HEADER,...",
        help="choose columns by their header, e.g. position=wavelength,intensity=global "
        "(roles: position, intensity, area, fwhm, snr)",
    )


def _block_arg(text: str) -> int | str | None:
    """A 0-based index as ``int``, anything else as the name it is (io.parse_block_choice)."""
    from workbench.io.readers import parse_block_choice

    return parse_block_choice(text)


def add_block_option(p: argparse.ArgumentParser) -> None:
    """Add ``--block``: which part of a multi-part file (JCAMP-DX block, workbook sheet)."""
    p.add_argument(
        "--block",
        type=_block_arg,
        metavar="INDEX|NAME",
        help="JCAMP-DX block (0-based index or title) or workbook sheet (index or name); "
        "default the first holding data",
    )
