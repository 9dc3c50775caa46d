"""Seeded synthetic mixtures against the shipped optical set: no false top-class verdict.

Spectra are synthesised (invented data) from the optical reference set itself
with the Boltzmann physics at 9000 K, rendered at resolving powers 1000, 5000
and 20000 with Gaussian noise, run through peak finding and the engine. The
expected answer is known by construction: the species that were put in.

Two further sets (issue 9) distort the ideal plasma the way real sources do:
``response`` multiplies every line by a smooth instrument response falling
by about 10× across the range, log10 R = −0.8u² − 0.5u with
u = (λ − 425 nm)/175 nm (invented); ``self-absorbed`` divides every resonance
line (lower level at 0 eV) by 5, as optically thick plasmas do (the factor
is invented, typical of dense LIBS plumes; common practice, no source).
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.matching.invented import seeded_mixtures
from workbench.matching import MatchParameters, match_peaks
from workbench.matching.engine import build_index
from workbench.matching.expected import expected_strengths
from workbench.peaks import find_peaks
from workbench.physics.synth import synthetic_spectrum
from workbench.refdata import load_set

# Species common in forensic and heritage casework (glass, paint, GSR, alloys, soil).
POOL = [
    "Na I",
    "Mg II",
    "Al I",
    "Si I",
    "Ca II",
    "Ti II",
    "Cr I",
    "Mn I",
    "Fe I",
    "Ni I",
    "Cu I",
    "Zn I",
    "Sr II",
    "Ba II",
    "Pb I",
    "Li I",
    "K I",
    "Sn I",
]
RANGE_NM = (250.0, 600.0)
T_K = 9000.0
N_PER_R = 18  # 3 resolving powers × 18 = 54 mixtures


@pytest.fixture(scope="module")
def optical():
    return load_set("optical")


def _mixtures():
    return seeded_mixtures(
        POOL,
        20261202,
        (1000.0, 5000.0, 20000.0),
        N_PER_R,
        6,
        lambda rng: float(rng.uniform(0.3, 3.0)),
    )


MIXTURES = _mixtures()


def _run(optical, R, abundance, seed, variant="flat"):
    index = build_index([optical], "wavelength", "air")
    in_range = (index.position >= RANGE_NM[0]) & (index.position <= RANGE_NM[1])
    e = np.nan_to_num(expected_strengths(index, T_K, "emission", in_range))
    names = np.array(index.species_names, dtype=object)[index.species]
    amp = e * np.array([abundance.get(n, 0.0) for n in names])
    if variant == "response":
        u = (index.position - 425.0) / 175.0
        amp = amp * 10.0 ** (-0.8 * u**2 - 0.5 * u)
    elif variant == "self-absorbed":
        resonance = np.nan_to_num(index.E_lower_eV, nan=1.0) < 0.01
        amp = np.where(resonance, amp / 5.0, amp)
    keep = in_range & (amp >= 1e-3)
    pos = index.position[keep]
    area = amp[keep] * (pos / R) * 1.0645  # height ∝ amp
    n_points = int((RANGE_NM[1] - RANGE_NM[0]) / (RANGE_NM[0] / R / 4))
    spec = synthetic_spectrum(
        pos,
        area,
        medium="air",
        x_range=RANGE_NM,
        n_points=n_points,
        resolving_power=R,
        noise_sigma=0.003,
        continuum=0.05,
        seed=seed,
    )
    peaks = find_peaks(spec, min_snr=5.0)
    rep = match_peaks(peaks, [optical], MatchParameters(temperature_K=T_K)).report()
    return {el["species"]: el["verdict_level"] for el in rep["elements"]}


@pytest.mark.slow
def test_no_false_top_class_and_recall(optical):
    false_top = []
    per_r: dict[float, dict[str, int]] = {}
    for R, abundance, seed in MIXTURES:
        stats = per_r.setdefault(
            R, {"put_in": 0, "est": 0, "prob": 0, "false_est": 0, "false_prob": 0}
        )
        levels = _run(optical, R, abundance, seed)
        present_elements = {s.split()[0] for s in abundance}
        for sp, lvl in levels.items():
            if sp.split()[0] not in present_elements:
                if lvl == 3:
                    false_top.append((R, sp, sorted(abundance)))
                    stats["false_est"] += 1
                elif lvl == 2:
                    stats["false_prob"] += 1
        for sp in abundance:
            stats["put_in"] += 1
            stats["est"] += levels.get(sp, 0) == 3
            stats["prob"] += levels.get(sp, 0) >= 2
    total = sum(v["put_in"] for v in per_r.values())
    found2 = sum(v["prob"] for v in per_r.values())
    print(f"\nmixtures {len(MIXTURES)}, species put in {total}")
    for R, v in sorted(per_r.items()):
        print(
            f"R={R:>7.0f}: put in {v['put_in']:3d}; established {v['est']:3d} "
            f"({v['est'] / v['put_in']:.0%}); probable-or-better {v['prob']:3d} "
            f"({v['prob'] / v['put_in']:.0%}); false established {v['false_est']}; "
            f"false probable {v['false_prob']}"
        )
    # The requirement: no element that was not put in is called "established".
    assert false_top == []
    # Recall is reported; a floor catches a broken engine (common practice, no source).
    assert found2 / total >= 0.6


VARIANT_MIXTURES = [m for i, m in enumerate(MIXTURES) if i % 3 == 0]  # 18: 6 per R


@pytest.mark.slow
@pytest.mark.parametrize("variant", ["response", "self-absorbed"])
def test_distorted_sources_no_false_top_class(optical, variant):
    false_top, put_in, found2 = [], 0, 0
    for R, abundance, seed in VARIANT_MIXTURES:
        levels = _run(optical, R, abundance, seed, variant)
        present = {s.split()[0] for s in abundance}
        false_top += [
            (R, sp) for sp, lv in levels.items() if lv == 3 and sp.split()[0] not in present
        ]
        put_in += len(abundance)
        found2 += sum(levels.get(sp, 0) >= 2 for sp in abundance)
    print(
        f"\n{variant}: {len(VARIANT_MIXTURES)} mixtures, put in {put_in}, "
        f"probable-or-better {found2} ({found2 / put_in:.0%}), false established {len(false_top)}"
    )
    assert false_top == []
    # Recall floor catches a broken engine (common practice, no source).
    assert found2 / put_in >= 0.5
