"""Start-up of ``workbench.cli``: the quick version line agrees with the full loader."""

from __future__ import annotations

import json

import pytest

from workbench.cli import _manifest_version_quick, _version_text, main
from workbench.refdata.manifest import data_version


def test_quick_version_equals_full_loader():
    # The full manifest loader is the oracle for the shipped collection.
    assert _manifest_version_quick() == data_version()


@pytest.mark.parametrize(
    "manifest",
    ["{not json", json.dumps({"data_version": 3, "sets": []}), json.dumps({"data_version": "x"})],
)
def test_unusual_manifest_falls_back_to_full_loader(tmp_path, monkeypatch, manifest):
    (tmp_path / "manifest.json").write_text(manifest)
    monkeypatch.setenv("WORKBENCH_REFERENCE_SETS", str(tmp_path))
    assert _manifest_version_quick() is None
    assert "reference data unavailable" in _version_text()


def test_version_does_not_import_polars_or_refdata(capsys):
    import subprocess
    import sys

    code = (
        "import sys\nfrom workbench.cli import main\ntry:\n    main(['--version'])\n"
        "except SystemExit:\n    pass\n"
        "print(sorted(m for m in ('polars', 'scipy', 'workbench.refdata') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip().splitlines()[-1] == "[]"
    with pytest.raises(SystemExit):
        main(["--version"])
    assert "reference data" in capsys.readouterr().out
