"""What ``workbench peaks`` imports (issue 14: its start-up was most of its time).

A fresh process shows what is loaded; nothing here is timed.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np

# Modules the peaks command has no use for, each of which cost start-up time:
# scipy (scipy.constants alone loads scipy's array-API layer), the engine and
# reference data, the case store, X-ray physics, the map pipeline and the app;
# numpy.ma is loaded by np.percentile and by polars' numpy constructors.
_NOT_ON_THE_PEAKS_PATH = (
    "scipy",
    "numpy.ma",
    "rapidfuzz",
    "workbench.matching",
    "workbench.refdata",
    "workbench.casefile",
    "workbench.findings",
    "workbench.xray",
    "workbench.maps",
    "workbench.physics.boltzmann",
    "workbench.physics.hydrogen",
    "xraylib",
    "dask",
    "streamlit",
)


def _spectrum_csv(path) -> None:
    # Invented spectrum: two Gaussian lines on a sloped background with seeded noise.
    x = np.linspace(400.0, 500.0, 2000)
    y = 50.0 + 0.1 * (x - 400.0)
    y += 300.0 * np.exp(-0.5 * ((x - 430.0) / 0.15) ** 2)
    y += 200.0 * np.exp(-0.5 * ((x - 470.0) / 0.15) ** 2)
    # A third line: with three peaks the split-top check runs (peaks.split),
    # whose np.median loaded numpy.ma until stop 33's review.
    y += 250.0 * np.exp(-0.5 * ((x - 450.0) / 0.15) ** 2)
    y += np.random.default_rng(20261202).normal(0.0, 2.0, x.size)
    lines = [f"{a:.5f},{b:.4f}" for a, b in zip(x, y, strict=True)]
    path.write_text("wavelength (nm),intensity\n" + "\n".join(lines) + "\n")


def test_peaks_command_imports_only_what_it_uses(tmp_path):
    src = tmp_path / "spectrum.csv"
    _spectrum_csv(src)
    out = tmp_path / "peaks.json"
    code = (
        "import sys, json\n"
        "from workbench.cli import main\n"
        f"rc = main(['peaks', {str(src)!r}, '--json', {str(out)!r}])\n"
        f"loaded = [m for m in {_NOT_ON_THE_PEAKS_PATH!r} if m in sys.modules]\n"
        "print(json.dumps([rc, loaded]))\n"
    )
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    rc, loaded = json.loads(r.stdout.strip().splitlines()[-1])
    assert rc == 0
    assert loaded == []
    # The three invented lines are found, so the command did its work.
    centres = sorted(p["wavelength_nm"] for p in json.loads(out.read_text())["peaks"])
    assert len(centres) == 3
    assert all(abs(c - w) < 0.05 for c, w in zip(centres, (430.0, 450.0, 470.0), strict=True))


def test_physics_package_names_resolve_lazily():
    # workbench.physics loads its sub-modules on first use of a name (PEP 562);
    # every public name must still resolve, to the object its sub-module defines.
    code = (
        "import sys\n"
        "import workbench.physics as ph\n"
        "before = 'scipy.constants' in sys.modules\n"
        "from workbench.physics import units, boltzmann, hydrogen\n"
        "sub = lambda n: sys.modules['workbench.physics.' + ph._MODULE_OF[n]]\n"
        "ok = all(getattr(ph, n) is getattr(sub(n), n) for n in ph.__all__)\n"
        "print(before, ok, sorted(ph.__all__) == sorted(ph._MODULE_OF))\n"
    )
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert r.stdout.split() == ["False", "True", "True"]


def test_hc_constant_is_codata_from_scipy():
    # Project rule: constants come from scipy.constants (CODATA), computed lazily here.
    from scipy import constants as sc

    from workbench.physics import units

    assert units.HC_EV_NM == sc.h * sc.c / sc.e * 1e9
    # The conversions use the same value: 1239.84198... eV·nm / 1239.84198... nm = 1 eV.
    assert units.wavelength_vac_nm_to_energy_eV([units.HC_EV_NM])[0] == 1.0


def test_peaks_command_loads_only_its_own_command_module(tmp_path):
    # main() registers only the named command's group when that module registers it.
    src = tmp_path / "spectrum.csv"
    _spectrum_csv(src)
    code = (
        "import sys\n"
        "from workbench.cli import COMMAND_MODULES, main\n"
        f"main(['peaks', {str(src)!r}, '--json', {str(tmp_path / 'p.json')!r}])\n"
        "print(sorted(m for m in COMMAND_MODULES if 'workbench.cli.' + m in sys.modules))\n"
    )
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert r.stdout.strip().splitlines()[-1] == "['peaks']"


def test_one_group_parser_reads_arguments_as_the_full_parser_does():
    from workbench.cli import build_parser

    argv = ["peaks", "f.csv", "--mode", "absorption", "--min-snr", "4", "--baseline", "als"]
    one, full = build_parser("peaks"), build_parser()
    a, b = vars(one.parse_args(argv)), vars(full.parse_args(argv))
    assert a.keys() == b.keys()
    assert all(a[k] == b[k] for k in a if k != "func")
    assert a["func"] is b["func"]
    # A name that is no command module gets every group (argparse then reports it).
    assert build_parser("no-such-command").format_help() == full.format_help()
