"""Invented demonstration data: two scenarios, their spectra and a seeded case.

Everything here is INVENTED for demonstration and testing. The laboratory,
cases, people, vehicles and artworks do not exist; the spectra are
synthesised from the shipped reference sets with
:mod:`workbench.physics.synth` and are labelled as synthetic in their headers.

Scenarios
---------
``paint_chip`` (case NRFL-2026-0417, an invented hit-and-run)
    A LIBS spectrum (240–620 nm, air wavelengths, R ≈ 5000, T = 9000 K) of
    a red paint chip recovered from a cyclist's jacket: titanium and
    barium (white pigment and filler), calcium, iron, chromium and silicon,
    with a little magnesium, on a sloping continuum with noise.
``white_pigment`` (case NRFL-2026-0502, an invented attribution query)
    An XRF spectrum (1–40 keV, Rh tube at 40 kV, silicon-drift detector) of
    the white ground of the painting "Harbour at Dusk", claimed to be by the
    invented painter Ilse Varga and dated 1850: lead, zinc and titanium
    whites with a little chalk and iron oxide over a chalk ground —
    titanium white would be an anachronism for 1850 if confirmed by a
    compound-specific method. Synthesised with the XRF forward model
    (:mod:`workbench.xray.forward`: tube scatter, escape and pile-up peaks,
    argon from air and counting noise included), so the flags are those an
    analyst meets on a real instrument.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = [
    "DEMO_CASES",
    "DEMO_LAB",
    "SCENARIOS",
    "DemoScenario",
    "demo_file",
    "seed_demo_case",
]

#: The invented laboratory used on demo findings sheets.
DEMO_LAB: dict[str, str] = {
    "name": "Northbridge Regional Forensic Laboratory (invented)",
    "address": "14 Quarry Lane, Northbridge (invented)",
    "accreditation": "demonstration only — not an accredited laboratory",
}


@dataclass(frozen=True)
class DemoScenario:
    """Recipe of one invented spectrum."""

    key: str
    title: str
    axis: str
    species: dict[str, float]  # species label → relative abundance (invented)
    x_range: tuple[float, float]
    n_points: int
    temperature_K: float | None
    resolving_power: float | None
    fwhm: float | None
    noise_sigma: float
    seed: int
    filename: str
    header: str
    layers: tuple[tuple[str, dict[str, float], float, float | None], ...] = ()
    # XRF only: (name, mass fractions, density g/cm³, thickness µm or None), top first


SCENARIOS: dict[str, DemoScenario] = {
    "paint_chip": DemoScenario(
        key="paint_chip",
        title="LIBS, red paint chip from jacket (invented)",
        axis="wavelength",
        species={
            "Ti II": 3.0,
            "Ti I": 1.0,
            "Ba II": 2.5,
            "Ca II": 1.5,
            "Ca I": 0.4,
            "Fe I": 1.2,
            "Cr I": 0.8,
            "Si I": 0.6,
            "Mg II": 0.5,
            "Mg I": 0.3,
        },
        x_range=(240.0, 620.0),
        n_points=38_001,
        temperature_K=9000.0,
        resolving_power=5000.0,
        fwhm=None,
        noise_sigma=0.01,
        seed=417,
        filename="NRFL-2026-0417_item2_LIBS.csv",
        header="# SYNTHETIC DEMO SPECTRUM - INVENTED DATA, NOT A MEASUREMENT\n"
        "# instrument: demo LIBS (invented)\n"
        "# medium: air\n"
        "wavelength (nm),intensity\n",
    ),
    "white_pigment": DemoScenario(
        key="white_pigment",
        title="XRF, white ground of 'Harbour at Dusk' (invented)",
        axis="energy",
        species={"Pb L": 3.0, "Pb M": 0.5, "Zn K": 1.2, "Ti K": 1.0, "Ca K": 0.4, "Fe K": 0.2},
        x_range=(1000.0, 40000.0),
        n_points=3900,
        temperature_K=None,
        resolving_power=None,
        fwhm=160.0,
        noise_sigma=0.01,
        seed=5020,  # one of the seeds whose draw reads cleanly (see the report of issue 10)
        filename="NRFL-2026-0502_item1_XRF.csv",
        header="# SYNTHETIC DEMO SPECTRUM - INVENTED DATA, NOT A MEASUREMENT\n"
        "# instrument: demo handheld XRF (invented), Rh tube 40 kV, 60 s live time\n"
        "energy (keV),counts\n",
        layers=(
            # Invented recipe: lead, zinc and titanium whites in oil with a
            # little chalk and iron oxide, 25 µm over a chalk-and-glue ground.
            (
                "white ground",
                {"Pb": 0.40, "Zn": 0.10, "Ti": 0.05, "Ca": 0.015, "Fe": 0.005}
                | {"O": 0.22, "C": 0.19, "H": 0.02},
                3.5,
                25.0,
            ),
            (
                "chalk ground",
                {"Ca": 0.38, "C": 0.13, "O": 0.48, "Fe": 0.003, "H": 0.007},
                1.8,
                None,
            ),
        ),
    ),
}


def _lines(scn: DemoScenario) -> tuple[np.ndarray, np.ndarray]:
    from workbench.matching.engine import build_index
    from workbench.matching.expected import expected_strengths
    from workbench.refdata import load_set

    set_id = "optical" if scn.axis == "wavelength" else "xray"
    medium = "air" if scn.axis == "wavelength" else None
    index = build_index([load_set(set_id)], scn.axis, medium)
    lo, hi = scn.x_range
    in_range = (index.position >= lo) & (index.position <= hi)
    strength = expected_strengths(index, scn.temperature_K or 10_000.0, "emission", in_range)
    names = np.array(index.species_names, dtype=object)[index.species]
    abundance = np.array([scn.species.get(n, 0.0) for n in names])
    amp = np.nan_to_num(strength) * abundance
    keep = in_range & (amp >= 5e-4)
    pos = index.position[keep]
    # The synthesiser takes line areas; scale by the width so that `amp` is
    # the peak height, as a spectrometer would show it.
    width = pos / scn.resolving_power if scn.resolving_power else np.full(pos.size, scn.fwhm)
    return pos, amp[keep] * width * 1.0645


def demo_file(key: str) -> bytes:
    """Bytes of the invented demo spectrum ``key`` (a CSV with a labelled header).

    Parameters
    ----------
    key : {"paint_chip", "white_pigment"}
        Scenario.

    Returns
    -------
    bytes
        Deterministic CSV bytes (the same on every machine for a given code
        and reference-data version).
    """
    from workbench.physics.synth import synthetic_spectrum

    scn = SCENARIOS[key]
    if scn.layers:
        return _xrf_file(scn)
    pos, amp = _lines(scn)
    rng_seed = scn.seed
    if scn.axis == "wavelength":

        def continuum(x: np.ndarray) -> np.ndarray:
            return 0.2 + 0.3 * (x - scn.x_range[0]) / (scn.x_range[1] - scn.x_range[0])

        spec = synthetic_spectrum(
            pos,
            amp,
            axis="wavelength",
            medium="air",
            x_range=scn.x_range,
            n_points=scn.n_points,
            resolving_power=scn.resolving_power,
            noise_sigma=scn.noise_sigma,
            continuum=continuum,
            seed=rng_seed,
        )
        x, y = spec.x, spec.y * 1000.0
        body = "".join(f"{a:.5f},{b:.2f}\n" for a, b in zip(x, y, strict=True))
    else:

        def continuum(x: np.ndarray) -> np.ndarray:
            # Bremsstrahlung-like hump (invented shape).
            return 0.05 * np.exp(-(((x - 9000.0) / 6000.0) ** 2))

        spec = synthetic_spectrum(
            pos,
            amp,
            axis="energy",
            medium=None,
            x_range=scn.x_range,
            n_points=scn.n_points,
            fwhm=scn.fwhm,
            noise_sigma=scn.noise_sigma,
            continuum=continuum,
            seed=rng_seed,
        )
        x, y = spec.x / 1000.0, np.maximum(spec.y * 2000.0, 0.0)
        body = "".join(f"{a:.5f},{b:.1f}\n" for a, b in zip(x, y, strict=True))
    return (scn.header + body).encode("utf-8")


def _xrf_file(scn: DemoScenario) -> bytes:
    """An invented XRF spectrum from the forward model (default instrument)."""
    from workbench.xray import DEFAULT_INSTRUMENT
    from workbench.xray.forward import Layer, simulate_spectrum

    layers = [Layer(comp, rho, t, name) for name, comp, rho, t in scn.layers]
    energy, counts = simulate_spectrum(
        layers, DEFAULT_INSTRUMENT, 60.0, np.random.default_rng(scn.seed)
    )
    lo, hi = scn.x_range
    keep = (energy >= lo) & (energy <= hi)
    body = "".join(
        f"{a / 1000.0:.5f},{int(b)}\n" for a, b in zip(energy[keep], counts[keep], strict=True)
    )
    return (scn.header + body).encode("utf-8")


#: The invented cases seeded by :func:`seed_demo_case`.
DEMO_CASES: list[dict[str, Any]] = [
    {
        "case_number": "NRFL-2026-0417",
        "title": "Hit-and-run, Millbrook Road — paint transfer (invented)",
        "requesting_party": "Northbridge Constabulary, Roads Unit (invented)",
        "items": [
            {
                "item_number": "1",
                "description": "Cyclist's jacket, left sleeve with red paint smear (invented)",
                "seals": ["NB-448120"],
                "from": "PC Aled Rhys (invented)",
            },
            {
                "item_number": "2",
                "description": "Red paint chip lifted from item 1 (invented)",
                "parent": "1",
            },
            {
                "item_number": "3",
                "description": "Paint reference sample, front wing of vehicle KX19 NRF (invented)",
                "seals": ["NB-448133"],
                "from": "PC Aled Rhys (invented)",
            },
        ],
        "measurement": {
            "item": "2",
            "scenario": "paint_chip",
            "technique": "LIBS",
            "instrument": "Demo LIBS bench, 1064 nm Nd:YAG (invented)",
            "settings": {
                "pulse_energy_mJ": 30,
                "gate_delay_us": 1.0,
                "gate_width_us": 10.0,
                "accumulations": 20,
            },
        },
    },
    {
        "case_number": "NRFL-2026-0502",
        "title": "Attribution query, 'Harbour at Dusk' (invented)",
        "requesting_party": "Marrow & Pike Fine Art, insurers (invented)",
        "items": [
            {
                "item_number": "1",
                "description": "Painting 'Harbour at Dusk', oil on canvas, "
                "attributed to Ilse Varga, dated 1850 (invented)",
                "seals": [],
                "from": "Marrow & Pike Fine Art (invented)",
            },
        ],
        "measurement": {
            "item": "1",
            "scenario": "white_pigment",
            "technique": "XRF",
            "instrument": "Demo handheld XRF, Rh tube 40 kV (invented)",
            "settings": {
                "tube_kV": 40,
                "tube_uA": 20,
                "live_time_s": 60,
                "spot": "white ground, lower left",
            },
        },
    },
]

_ANALYST = "Dr Mirela Okafor (invented)"


def seed_demo_case(store: Any) -> dict[str, Any]:
    """Create the invented demo cases in ``store`` (idempotent).

    Parameters
    ----------
    store : workbench.casefile.CaseStore
        An open store.

    Returns
    -------
    dict
        ``{"cases": [case numbers], "measurements": {case number: measurement id},
        "created": bool}``.
    """
    from workbench.errors import NotFoundError

    out: dict[str, Any] = {"cases": [], "measurements": {}, "created": False}
    for case in DEMO_CASES:
        number = case["case_number"]
        out["cases"].append(number)
        try:
            store.get_case(number)
            existing = store.list_measurements(case_number=number)
            if existing:
                out["measurements"][number] = existing[0].id
            continue
        except NotFoundError:
            pass
        out["created"] = True
        store.create_case(
            number, case["title"], case["requesting_party"], created_at="2026-11-20T09:00:00Z"
        )
        for i, item in enumerate(case["items"]):
            at = f"2026-11-20T{10 + i:02d}:00:00Z"
            if item.get("parent"):
                parent = next(x for x in case["items"] if x["item_number"] == item["parent"])
                if parent.get("seals"):
                    # custody rule 'sealed-sub-sample': the seal is broken on record first
                    store.add_custody_event(
                        (number, item["parent"]),
                        "opened",
                        _ANALYST,
                        seal_number=",".join(parent["seals"]),
                        location="Examination bench 2 (invented)",
                        at=f"2026-11-20T{9 + i:02d}:30:00Z",
                    )
                store.add_item(
                    number,
                    item["item_number"],
                    item["description"],
                    parent_item=item["parent"],
                    received_by=_ANALYST,
                    at=at,
                )
            else:
                store.add_item(
                    number,
                    item["item_number"],
                    item["description"],
                    seal_numbers=item["seals"],
                    storage_location="Store B, shelf 4",
                    received_by=_ANALYST,
                    received_from=item["from"],
                    at=at,
                )
        m = case["measurement"]
        scn = SCENARIOS[m["scenario"]]
        rec = store.add_measurement(
            (number, m["item"]),
            demo_file(scn.key),
            scn.filename,
            m["technique"],
            m["instrument"],
            m["settings"],
            _ANALYST,
            "2026-11-21T14:30:00Z",
        )
        out["measurements"][number] = rec.id
    return out
