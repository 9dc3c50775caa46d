"""Verify edge cases: harmless leftovers, sub-sample time order, layering."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.casefile.helpers import populate
from workbench.errors import CustodyRuleError, StoreIntegrityError


def test_orphans_are_harmless(store):
    populate(store)
    # an interrupted write (temp file) and a content file whose row never committed
    (store.files.root / "ab").mkdir(exist_ok=True)
    (store.files.root / "ab" / ".tmp-deadbeef").write_bytes(b"half written")
    store.files.put(b"file written, row never committed")
    report = store.verify()
    assert report.ok, report.first_break


def test_file_bytes_checks_hash(store):
    info = populate(store)
    sha = info["measurement"].sha256
    store.files.path(sha).write_bytes(b"swapped")
    with pytest.raises(StoreIntegrityError, match="replaced or corrupted"):
        store.file_bytes(sha)


def test_subsample_cannot_precede_parent_sampling(store):
    info = populate(store)
    # populate() takes sub-sample 1.1 at 10:30; 10:00 is before it
    with pytest.raises(CustodyRuleError, match="'time-order'"):
        store.add_custody_event(
            f"{info['case']}/1.1", "note", "Dana Whitlock", note="x", at="2026-02-03T10:00:00Z"
        )


def test_casefile_never_reaches_up_into_findings():
    """Layering (issue 12): the case store verifies signatures through workbench.crypto."""
    import ast

    import workbench.casefile

    root = Path(workbench.casefile.__file__).parent
    for path in sorted(root.glob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [node.module or ""]
            for name in names:
                # layers point down; no importlib tricks (DEVELOPERS.md, common practice)
                assert not name.startswith(("workbench.findings", "importlib")), (path, name)
            if isinstance(node, ast.Call) and getattr(node.func, "attr", "") == "import_module":
                raise AssertionError(f"{path}: dynamic import")
