"""Energy-dispersive detector: channel calibration and Gaussian line response.

The response of a silicon drift / Si(Li) detector to a photon line is taken
as a Gaussian whose full width at half maximum grows with energy as

    FWHM(E) = sqrt(noise² + 2.355² · F · ε · E)

(electronic noise added in quadrature to the Fano-limited charge statistics;
Knoll, *Radiation Detection and Measurement*, 4th ed., 2010, ch. 13). For
silicon the Fano factor F = 0.115 and the mean energy per electron-hole pair
ε = 3.66 eV (Scholze, Rabus & Ulm, J. Appl. Phys. 84, 2926 (1998); from
memory). Escape peaks (the Si Kα photon leaving the detector) sit 1739.98 eV
below their parent line for parents above the Si K edge at 1838.9 eV (Si Kα1
and K-edge energies from the shipped ``xray`` reference set and Bearden &
Burr 1967, from memory); their fraction is small and is folded into each
line family's template with a fixed ratio (common practice, no source).

This module is deliberately small; the instrument description of the X-ray
sub-package may later replace it.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from workbench.errors import FileFormatError, InputError, ValueRangeError

__all__ = [
    "FANO_SI",
    "PAIR_ENERGY_SI_EV",
    "SI_ESCAPE_EV",
    "SI_K_EDGE_EV",
    "Instrument",
    "fwhm_eV",
    "gaussian_response",
    "load_instrument",
]

#: Fano factor of silicon (Scholze, Rabus & Ulm 1998; from memory).
FANO_SI = 0.115
#: Mean energy per electron-hole pair in silicon, eV (same source).
PAIR_ENERGY_SI_EV = 3.66
#: Si Kα energy (escape-peak offset), eV (Bearden 1967; from memory).
SI_ESCAPE_EV = 1739.98
#: Si K absorption edge, eV (Bearden & Burr 1967; from memory).
SI_K_EDGE_EV = 1838.9
_FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))  # 2.3548 (exact for a Gaussian)


def fwhm_eV(
    energy_eV: np.ndarray | float,
    noise_fwhm_eV: float = 80.0,
    fano: float = FANO_SI,
    pair_energy_eV: float = PAIR_ENERGY_SI_EV,
) -> np.ndarray:
    """Detector FWHM at ``energy_eV`` (eV): √(noise² + 2.355²·F·ε·E).

    Parameters
    ----------
    energy_eV : array_like
        Photon energies in eV (negative values are treated as 0).
    noise_fwhm_eV : float
        Electronic-noise contribution (FWHM, eV); 80 eV is a typical silicon
        drift detector (common practice, no source).
    fano, pair_energy_eV : float
        Fano factor and pair-creation energy of the detector material.

    Returns
    -------
    numpy.ndarray
        FWHM in eV.
    """
    e = np.maximum(np.asarray(energy_eV, dtype=float), 0.0)
    return np.sqrt(noise_fwhm_eV**2 + _FWHM_PER_SIGMA**2 * fano * pair_energy_eV * e)


def gaussian_response(
    energy_axis_eV: np.ndarray, line_eV: np.ndarray, fwhm: np.ndarray
) -> np.ndarray:
    """Unit-area Gaussians sampled on the channel axis, one column per line.

    Each column integrates to one over the channels (counts per channel), so
    a coefficient of *n* means *n* counts in that line. Lines that fall
    outside the axis contribute only the part of their tail inside it.

    Parameters
    ----------
    energy_axis_eV : numpy.ndarray
        Channel centres (eV), increasing, shape ``(n_channels,)``.
    line_eV, fwhm : numpy.ndarray
        Line energies and their FWHM (eV), shape ``(n_lines,)``.

    Returns
    -------
    numpy.ndarray
        Shape ``(n_channels, n_lines)``.
    """
    x = np.asarray(energy_axis_eV, dtype=float)[:, None]
    mu = np.asarray(line_eV, dtype=float)[None, :]
    sigma = np.asarray(fwhm, dtype=float)[None, :] / _FWHM_PER_SIGMA
    width = np.gradient(x[:, 0])[:, None] if x.shape[0] > 1 else np.ones_like(x)
    return width * np.exp(-0.5 * ((x - mu) / sigma) ** 2) / (sigma * math.sqrt(2.0 * math.pi))


@dataclass(frozen=True)
class Instrument:
    """What the map pipeline needs to know about an energy-dispersive instrument.

    Attributes
    ----------
    offset_eV, gain_eV_per_channel : float or None
        Linear channel calibration E = offset + gain·channel (None when the
        cube itself carries its energy axis).
    noise_fwhm_eV, fano, pair_energy_eV : float
        Detector response (see :func:`fwhm_eV`).
    escape_fraction : float
        Si escape-peak intensity relative to its parent (0 disables).
    pixel_size_um : float or None
        Step between pixels, for the scale bar.
    name : str
        Free text, recorded with the products.
    extra : dict
        Anything else the description held (recorded, not used).
    """

    offset_eV: float | None = None
    gain_eV_per_channel: float | None = None
    noise_fwhm_eV: float = 80.0
    fano: float = FANO_SI
    pair_energy_eV: float = PAIR_ENERGY_SI_EV
    escape_fraction: float = 0.01
    pixel_size_um: float | None = None
    name: str = "unspecified energy-dispersive detector"
    extra: dict[str, Any] = field(default_factory=dict)

    def energy_axis_eV(self, n_channels: int) -> np.ndarray:
        """Channel centres from the linear calibration (InputError if there is none)."""
        if self.offset_eV is None or self.gain_eV_per_channel is None:
            raise InputError(
                "the cube has no energy calibration and the instrument description gives none",
                "give --instrument FILE with offset_eV and gain_eV_per_channel, or store the "
                "energy axis in the file",
            )
        return self.offset_eV + self.gain_eV_per_channel * np.arange(n_channels, dtype=float)

    def fwhm(self, energy_eV: np.ndarray | float) -> np.ndarray:
        """Detector FWHM (eV) at ``energy_eV`` for this instrument."""
        return fwhm_eV(energy_eV, self.noise_fwhm_eV, self.fano, self.pair_energy_eV)

    def to_dict(self) -> dict[str, Any]:
        """JSON-friendly form (recorded with every product)."""
        return asdict(self)

    def xray_instrument(self) -> Any:
        """The :class:`workbench.xray.Instrument` the description named, or ``None``.

        A description written for ``workbench match --instrument`` (anode, tube
        voltage, detector, FWHM at Mn Kα, atmosphere, ...) is kept whole under
        ``extra["xray"]`` so that the identification step of the map pipeline
        matches with the same detector, tube and artefact model as the CLI.
        """
        data = self.extra.get("xray")
        if not isinstance(data, dict):
            return None
        from workbench.xray.instrument import Instrument as XrayInstrument

        return XrayInstrument.from_dict(data)


_KNOWN = {f for f in Instrument.__dataclass_fields__ if f != "extra"}


def load_instrument(path: str | Path | None) -> Instrument:
    """Read an instrument description (JSON object) or return the defaults.

    Recognised keys are the fields of :class:`Instrument`; other keys are kept
    in ``extra``. Example::

        {"name": "demo scanner", "offset_eV": -20.0, "gain_eV_per_channel": 10.0,
         "noise_fwhm_eV": 80.0, "pixel_size_um": 500.0}

    Parameters
    ----------
    path : str or pathlib.Path or None
        The JSON file; None gives the defaults.

    Returns
    -------
    Instrument
    """
    if path is None:
        return Instrument()
    p = Path(path)
    try:
        data = json.loads(p.read_text(encoding="utf-8"))
    except OSError as exc:
        raise InputError(
            f"cannot read instrument description {p} ({exc.strerror})", "check the path"
        ) from exc
    except (UnicodeDecodeError, ValueError) as exc:
        raise FileFormatError(
            f"instrument description {p} is not valid JSON ({exc})", "write it as one JSON object"
        ) from exc
    if not isinstance(data, dict):
        raise FileFormatError(
            f"instrument description {p} is not a JSON object",
            "write it as one JSON object of named values",
        )
    known = {k: data[k] for k in _KNOWN if k in data}
    for key, value in known.items():
        if key == "name":
            continue
        if value is not None and (not isinstance(value, int | float) or not math.isfinite(value)):
            raise ValueRangeError(
                f"instrument description {p}: {key} = {value!r} is not a number",
                "give a finite number",
            )
    if known.get("gain_eV_per_channel") is not None and known["gain_eV_per_channel"] <= 0:
        raise ValueRangeError(
            f"instrument description {p}: gain_eV_per_channel must be > 0",
            "give the channel width in eV",
        )
    extra = {k: v for k, v in data.items() if k not in _KNOWN}
    known.update(_from_xray_settings(data, extra, p))
    return Instrument(**known, extra=extra)


def _from_xray_settings(data: dict[str, Any], extra: dict[str, Any], p: Path) -> dict[str, Any]:
    """Detector response from the settings of a ``workbench match --instrument`` file.

    One file serves both commands: its X-ray settings (everything
    :class:`workbench.xray.Instrument` knows) are checked as ``match`` checks
    them, kept under ``extra["xray"]``, and give the noise, Fano factor and
    pair energy here unless the file states those directly.
    """
    from dataclasses import fields

    from workbench.xray.detector import noise_fwhm_eV
    from workbench.xray.instrument import Instrument as XrayInstrument

    names = {f.name for f in fields(XrayInstrument)}
    xray = {k: extra.pop(k) for k in list(extra) if k in names}
    if not xray:
        return {}
    if "name" in data:
        xray["name"] = data["name"]
    try:
        inst = XrayInstrument.from_dict(xray)
    except InputError as exc:
        raise InputError(f"instrument description {p}: {exc.problem}", exc.remedy) from None
    extra["xray"] = xray
    derived = {
        "noise_fwhm_eV": noise_fwhm_eV(inst),
        "fano": inst.fano_factor,
        "pair_energy_eV": inst.pair_energy_eV,
    }
    return {k: v for k, v in derived.items() if k not in data}
