"""The real Th-Ar atlas in short stretches, as an echelle spectrograph records it.

An echelle spectrum is many orders a few nm long; each is matched on its own.
The KPNO Th-Ar hollow-cathode atlas (``tests/data/realspectra/pyreduce``, a tune
file) is cut into 5 nm windows every 25 nm from 305 to 1035 nm (30 windows) at
its own resolution and run through the product's peak finding and matching
with the defaults.

Truth: the lamp's own line list (``thar_list.txt``, species per line). Thorium
has identified lines in every window; at 305–310 nm eight of its ten are Th II,
which the optical set carries in full since data 2026.12.7 (before, thorium was
"not supported" there). Argon has 0–11 identified lines per window (Ar I, Ar II).
"""

from __future__ import annotations

import functools
from dataclasses import replace

import numpy as np
import pytest

from tests.realdata.loader import load
from tests.realdata.run import element_classes, run_real
from workbench.datamodel import Spectrum

STARTS_NM = tuple(float(v) for v in np.arange(305.0, 1050.0, 25.0))
WIDTH_NM = 5.0
#: Impurities shown present in the full atlas (tests/realdata/test_realspectra.py).
IMPURITIES = {"Ca", "Cr"}


@functools.cache
def _atlas():
    return load("thar")


def _identified() -> tuple[np.ndarray, np.ndarray]:
    atlas = _atlas()
    return atlas.identified_nm, atlas.notes["line_species"]


@functools.cache
def _window(lo: float):
    atlas = _atlas()
    x, y = atlas.spectrum.x, atlas.spectrum.y
    keep = (x >= lo) & (x <= lo + WIDTH_NM)
    spec = Spectrum(x[keep], y[keep], "wavelength", "air", atlas.spectrum.source, "counts")
    return run_real(replace(atlas, spectrum=spec)).report


def _n_lines(lo: float, prefix: str) -> int:
    w, sp = _identified()
    inside = (w >= lo) & (w <= lo + WIDTH_NM)
    return int(np.sum(inside & np.char.startswith(sp.astype(str), prefix)))


@pytest.mark.parametrize("lo", STARTS_NM)
def test_thorium_in_every_window_and_nothing_absent(lo):
    assert _n_lines(lo, "Th") >= 5  # the lamp's own list shows thorium in each
    report = _window(lo)
    assert element_classes(report).get("Th") == "established"
    false = [
        (e["species"], e["verdict"])
        for e in report["elements"]
        if e["verdict_level"] >= 2 and e["element"] not in {"Th", "Ar"} | IMPURITIES
    ]
    assert false == []


@pytest.mark.parametrize("lo", [lo for lo in STARTS_NM if _n_lines(lo, "A") >= 5])
def test_argon_where_five_or_more_of_its_lines_are_identified(lo):
    # "A" covers the list's labels ArI, ArII and AI; 355, 380, 405, 430, 455
    # and 605 nm. With 3-4 lines (555, 630, 705, 730 nm) Ar is "probable".
    assert element_classes(_window(lo)).get("Ar") == "established"
