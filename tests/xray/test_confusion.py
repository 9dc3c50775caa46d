"""Confusion table of the XRF chain on forward-model spectra (issue 10).

Spectra come from :mod:`workbench.xray.forward` (fundamental parameters from
xraylib 4.3: Kissel photo-ionisation with cascades, Elam/Krause yields,
DCS_Rayl/DCS_Compt scatter); peaks from :func:`workbench.peaks.find_peaks`;
matching against the shipped ``xray`` set (Elam et al. 2002 via xraydb), with
line yields and the minor lines it lacks from xraylib (``workbench.xray.lines``).
The table is printed per family and per element (``ELEMENTS`` lines: an
element is called at the best level of its families, as the issue counts).

Truth per spectrum: a line family is *present* when the model puts it above
3σ on its main line, SNR = N/√(N + B) with N the family's counts within half
a FWHM of its strongest line and B the rest of the expected counts within
±FWHM (counting statistics). *Absent* species are those of elements not in
the sample. The table is printed (``pytest -s``); the assertions are the
conditions the X-ray physics itself guarantees, independent of the class
rules (owned by the evidence model, issue 9):

* every escape, sum and scatter peak with more than 300 counts that stands
  as a peak of its own (not under a larger element line) is labelled as an
  artefact in the JSON, or is not in the evidence at all;
* the tube anode (Rh) and argon from air are never called;
* no absent element reaches "probable" (element level);
* Ba L on the Ti-bearing fabric reaches "probable", and the Ba L / Ti K
  interference carries the spectrum fit's decision, both needed.

The other class targets (≥ 95 % of present families "probable", top class
at SNR > 10, ≤ 3 absent "possible") are printed, not asserted
(``benchmarks/xrf_confusion.py`` prints the table beside another commit's).
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest

from tests.xray.cases import CASES, RESOLUTIONS_EV, SEEDS, run_case
from workbench.xray.detector import fwhm_eV
from workbench.xray.excitation import measurable

_LEVEL = {"established": 3, "probable": 2, "possible": 1, "not supported": 0}


def _truth(fs, inst_fwhm) -> dict[str, float]:
    """SNR of each fluorescent family's main line."""
    from tests.xray.cases import instrument

    inst = instrument(inst_fwhm)
    comp = fs.components.filter(pl.col("kind") == "fluorescence")
    out = {}
    for (el, fam), grp in comp.group_by(["element", "family"]):
        top = grp.sort("counts", descending=True).row(0, named=True)
        if not measurable(np.array([top["energy_eV"]]), inst)[0] or top["shown_eV"] < 1000.0:
            continue  # hidden by the air path, or below the 1 keV the test spectrum starts at
        w = float(fwhm_eV(top["energy_eV"], inst))
        near = grp.filter((pl.col("energy_eV") - top["energy_eV"]).abs() <= 0.5 * w)
        n = float(near["counts"].sum())
        win = np.abs(fs.energy_eV - top["shown_eV"]) <= w
        b = max(float(fs.expected[win].sum()) - 0.98 * n, 0.0)
        out[f"{el} {fam}"] = n / np.sqrt(n + b) if n > 0 else 0.0
    return out


def _artefact_groups(fs, inst_fwhm) -> list[tuple[float, float, str]]:
    """(energy, counts, kinds) of artefact peaks, components within half a FWHM merged."""
    from tests.xray.cases import instrument

    inst = instrument(inst_fwhm)
    art = fs.components.filter(pl.col("kind").is_in(["escape", "sum", "rayleigh", "compton"]))
    art = art.sort("shown_eV")
    groups: list[list] = []
    for r in art.iter_rows(named=True):
        if groups and r["shown_eV"] - groups[-1][0] <= 0.5 * float(fwhm_eV(r["shown_eV"], inst)):
            groups[-1][1] += r["counts"]
            groups[-1][2].add(r["kind"])
        else:
            groups.append([r["shown_eV"], r["counts"], {r["kind"]}])
    return [(e, c, ",".join(sorted(k))) for e, c, k in groups]


@pytest.mark.parametrize("fwhm", RESOLUTIONS_EV)
@pytest.mark.parametrize("case", sorted(CASES))
def test_confusion(case, fwhm):
    table = []
    n_art = n_ok = 0
    for seed in SEEDS[:2]:
        fs, rep = run_case(case, fwhm, seed)
        sample = {el for layer in CASES[case] for el in layer.composition}
        truth = _truth(fs, fwhm)
        called = {e["species"]: e["verdict"] for e in rep["elements"]}
        print(f"\n== {case}, FWHM {fwhm:g} eV at Mn Kα, seed {seed}")
        for sp, snr in sorted(truth.items(), key=lambda t: -t[1]):
            if snr >= 3.0:
                print(f"  present {sp:<6} SNR {snr:8.1f}  -> {called.get(sp, 'not listed')}")
                table.append((seed, "present", sp, snr, called.get(sp, "not listed")))
        absent = {
            sp: v for sp, v in called.items() if sp.split()[0] not in sample and _LEVEL[v] >= 1
        }
        for sp, v in sorted(absent.items(), key=lambda t: -_LEVEL[t[1]]):
            print(f"  absent  {sp:<6} -> {v}")
            table.append((seed, "absent", sp, 0.0, v))
        arts = rep["xray"]["artefact_peaks"]
        for a in arts:
            print(
                f"  artefact {a['observed_eV']:7.0f} eV {a['kinds']:<16} explained={a['explained']}"
            )
        pres = [t for t in table if t[0] == seed and t[1] == "present"]
        n_prob = sum(_LEVEL.get(v, 0) >= 2 for *_, v in pres)
        n_top = sum(v == "established" for *_, snr, v in pres if snr > 10)
        n_top_all = sum(snr > 10 for *_, snr, _v in pres)
        n_abs_prob = sum(_LEVEL[v] >= 2 for v in absent.values())
        n_abs_poss = sum(_LEVEL[v] == 1 for v in absent.values())
        print(
            f"  SUMMARY {case} {fwhm:g} {seed}: present probable+ {n_prob}/{len(pres)}, "
            f"SNR>10 established {n_top}/{n_top_all}, absent probable+ {n_abs_prob}, "
            f"absent possible {n_abs_poss}"
        )
        # The targets count elements: an element is called at the best
        # level of its families, present when any family is above 3σ.
        el_snr: dict[str, float] = {}
        el_lev: dict[str, int] = {}
        for *_, sp, snr, v in pres:
            el = sp.split()[0]
            el_snr[el] = max(el_snr.get(el, 0.0), snr)
            el_lev[el] = max(el_lev.get(el, 0), _LEVEL.get(v, 0))
        abs_el: dict[str, int] = {}
        for sp, v in absent.items():
            abs_el[sp.split()[0]] = max(abs_el.get(sp.split()[0], 0), _LEVEL[v])
        print(
            f"  ELEMENTS {case} {fwhm:g} {seed}: present probable+ "
            f"{sum(v >= 2 for v in el_lev.values())}/{len(el_lev)}, SNR>10 established "
            f"{sum(el_lev[e] == 3 for e in el_snr if el_snr[e] > 10)}/"
            f"{sum(s > 10 for s in el_snr.values())}, absent probable+ "
            f"{sum(v >= 2 for v in abs_el.values())}, absent possible "
            f"{sum(v == 1 for v in abs_el.values())}"
        )
        # Artefact peaks with > 300 counts standing on their own are labelled or not evidence.
        comp = fs.components.filter(pl.col("kind") == "fluorescence")
        for e, counts, kinds in _artefact_groups(fs, fwhm):
            if counts <= 300:
                continue
            w = 0.5 * float(np.interp(e, fs.energy_eV, fwhm_eV(fs.energy_eV, run_fwhm(fwhm))))
            hidden = comp.filter(
                ((pl.col("shown_eV") - e).abs() <= 2 * w) & (pl.col("counts") >= 0.3 * counts)
            ).height
            if hidden:
                continue
            labelled = any(abs(a["observed_eV"] - e) <= 2 * w for a in arts)
            evidence = [
                ln for ln in rep["lines"] if abs(ln["observed_eV"] - e) <= w and ln["assigned_to"]
            ]
            print(
                f"  truth artefact {e:7.0f} eV {kinds:<16} {counts:8.0f} counts: "
                f"labelled={labelled} evidence={[ln['assigned_to'] for ln in evidence]}"
            )
            n_art += 1
            n_ok += bool(labelled or not evidence)
        # The tube anode and argon from air are never called (artefacts, not sample).
        assert not any(sp.split()[0] in ("Rh", "Ar") for sp in absent), absent
        # No absent element reaches "probable" (the target; measured
        # 2 of 20 spectra before the missing-family rule of joint.py).
        assert not any(_LEVEL[v] >= 2 for v in absent.values()), absent
        if case == "gsr_on_ti_fabric":
            # Ba Lα under Ti Kα: decided on the spectrum (Ba Lβ/Lγ against Ti Kβ)
            # and reported as an interference with the fit's decision.
            assert _LEVEL[called.get("Ba L", "not supported")] >= 2, called.get("Ba L")
            dec = [
                w["decision"]
                for w in rep["warnings"]
                if "decision" in w and {"Ba L", "Ti K"} <= set(w["decision"])
            ]
            assert dec and dec[0]["Ba L"]["needed"] and dec[0]["Ti K"]["needed"], dec
    # Every artefact peak with > 300 counts standing on its own is labelled or
    # not evidence (measured: all 328 such groups over the 20 spectra).
    assert n_ok == n_art, (n_ok, n_art)


def run_fwhm(fwhm):
    from tests.xray.cases import instrument

    return instrument(fwhm)
