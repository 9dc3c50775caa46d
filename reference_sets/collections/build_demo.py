"""Rebuild the invented demo glass collection and questioned samples.

Everything here is INVENTED for demonstration: the laboratory, people,
sources and all intensities. Line wavelengths are well-known strong LIBS
lines of the elements in soda-lime glass, air wavelengths in nm quoted from
memory (NIST ASD values, not rechecked). Run from the repository root:

    uv run python reference_sets/collections/build_demo.py
"""

from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np

from workbench.compare import add_exemplar, create_collection

HERE = Path(__file__).resolve().parent
COLLECTION = "demo-float-glass"

# (element, air wavelength nm (from memory), base intensity (invented))
LINES = [
    ("Fe", 259.940, 900.0),
    ("Mg", 279.553, 6000.0),
    ("Mg", 280.270, 3500.0),
    ("Mg", 285.213, 2500.0),
    ("Si", 288.158, 4000.0),
    ("Ca", 393.366, 20000.0),
    ("Al", 394.401, 1500.0),
    ("Al", 396.152, 2600.0),
    ("Ca", 396.847, 14000.0),
    ("Sr", 407.771, 1200.0),
    ("Sr", 421.552, 700.0),
    ("Ca", 422.673, 5000.0),
    ("Sr", 460.733, 400.0),
    ("Na", 588.995, 30000.0),
    ("Na", 589.592, 18000.0),
    ("K", 766.491, 2200.0),
    ("K", 769.896, 1300.0),
]
EXTRA = {"Ba": [("Ba", 455.403, 1800.0), ("Ba", 493.408, 700.0)], "Ti": [("Ti", 334.941, 900.0)]}

# Invented sources: per-element intensity factors (composition differences).
SOURCES = {
    "KRF-G01": (
        {"Sr": 1.0, "Fe": 1.0},
        [],
        "float glass, window pane",
        "Glazier's yard, Harlow Street (invented)",
    ),
    "KRF-G02": (
        {"Sr": 1.6, "Fe": 0.5},
        ["Ba"],
        "float glass, vehicle side window",
        "Scrap yard sample 7 (invented)",
    ),
    "KRF-G03": (
        {"Sr": 0.7, "Fe": 2.2},
        ["Ti"],
        "container glass, green bottle",
        "Bottle bank, Mill Lane (invented)",
    ),
}


def _peaks(rng: np.random.Generator, factors: dict[str, float], extras: list[str]) -> bytes:
    lines = list(LINES)
    for e in extras:
        lines += EXTRA[e]
    rows = ["wavelength_nm,intensity"]
    shot = rng.normal(1.0, 0.05)  # shot-to-shot total intensity (invented)
    for el, wl, base in sorted(lines, key=lambda t: t[1]):
        inten = base * factors.get(el, 1.0) * shot * rng.normal(1.0, 0.03)
        pos = wl + rng.normal(0.0, 0.004)
        rows.append(f"{pos:.4f},{inten:.1f}")
    return ("\n".join(rows) + "\n").encode()


def main() -> None:
    """Write the demo collection and questioned samples."""
    rng = np.random.default_rng(20261202)
    target = HERE / COLLECTION
    if target.exists():
        shutil.rmtree(target)
    create_collection(
        HERE,
        COLLECTION,
        "Demo: float and container glass exemplars (INVENTED DATA)",
        description="Invented LIBS peak lists for demonstrating questioned-vs-known comparison. "
        "Kestrel Ridge Forensic Laboratory and every person, place and value are invented.",
        created_by="A. Example (invented)",
    )
    base_elements = sorted({el for el, _, _ in LINES})
    for ex_id, (factors, extras, material, origin) in SOURCES.items():
        reps = [_peaks(rng, factors, extras) for _ in range(4)]
        add_exemplar(
            HERE,
            COLLECTION,
            ex_id,
            reps,
            material=material,
            origin=origin,
            date="2026-01-15",
            measured_by="B. Sample (invented)",
            instrument="bench LIBS, 1064 nm, Czerny-Turner 0.05 nm (invented)",
            technique="LIBS",
            notes="INVENTED demo data",
            elements=sorted(set(base_elements) | set(extras)),
            medium="air",
            original_names=[f"{ex_id}-r{i + 1}.csv" for i in range(4)],
        )
    qdir = HERE / "questioned-demo"
    qdir.mkdir(exist_ok=True)
    for i in range(3):  # a fragment from the same invented source as KRF-G02
        (qdir / f"Q1-r{i + 1}.csv").write_bytes(_peaks(rng, SOURCES["KRF-G02"][0], ["Ba"]))
    print(f"wrote {target} and {qdir}")


if __name__ == "__main__":
    main()
