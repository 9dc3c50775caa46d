"""Pooling the evidence of one element's ion stages (wavelength axis).

Why: the verdict classes are given per species (Mg I, Mg II), but the
question an examiner answers is per element, and an element's stages are
not independent hypotheses — in a plasma where Mg II's resonance doublet is
seen, Mg I 285.21 nm is expected too. Scored one by one, an element with a
clean doublet in one stage and one clean line in the other never gathers
enough evidence in either to pass the classes' thresholds, although the
three lines together are very unlikely to be coincidences (the invented
LIBS demo's Mg; Ca II H and K with Ca I 422.67 nm).

Rule. For every element with at least two stages that each have at least
one counted group (found, visible, not explained by a better species):

* combined chance probability of the stages' coincidences, with Simes'
  method (``min_i m·p_(i)/i`` over the m stages' p-values sorted
  ascending; :func:`~workbench.matching.chance.simes_combined`). Why not
  Fisher's method (stops 17–24): it assumes independent p-values, and
  under chance an element's stages are positively dependent — their lines
  crowd into the same stretches of a spectrum (a rare earth's I and II
  lines in the blue, where a Th-Ar lamp's thorium lines crowd too), so a
  spectrum crowded there gives both stages chance hits at once. Simes'
  combination stays valid under positive dependence. Measured at stop 25
  (with the emission chance of :mod:`workbench.matching.density`): on the
  real Th-Ar atlas degraded to R 1000–5000 (15 range × resolution
  settings, ``tests/realdata/loader.degrade``) Fisher pooling left Gd I +
  II and Ce I + II "probable" where neither stage is more than "possible"
  alone; with Simes none (with Fisher and the density change, Gd I + II
  at R 1000 remained); the absorption mixtures unchanged (184/268
  "probable" or better, 161 "established", no false call). The price: a
  weak stage gains less from a strong one; the invented LIBS demo's Mg I
  (p 3×10⁻³, one line) beside Mg II (p 2.6×10⁻⁴, the doublet) pools to
  p 5.2×10⁻⁴, 1.49 dex over the elements tried, and stays "possible"
  (Fisher: 2.2 dex, "probable"); Mg II is "probable" on its own;
* corrected for the number of *elements* tried (Šidák), since this is one
  more test per element, not per species;
* pooled net evidence = −log10(corrected p) + Σ the stages' missing-line
  penalties + the element's prior (once);
* the class rules of :mod:`workbench.matching.scoring` applied to the pooled
  evidence with the stages' counted groups and unique peaks added up; each
  stage that has a counted group of its own and whose own coincidences are
  significant as one pre-specified test (chance probability p ≤
  :data:`~workbench.matching.prior_test.PRIOR_DATA_P`, 0.05: the element shown
  present names the stage in advance, as an abundance prior does) is raised
  to the pooled class if that is higher (never lowered). A stage without a
  counted group of its own is not raised: it is not seen. Nor is a stage
  whose own matches are as likely as not by chance: the combination is
  dominated by the strong stage, and before this rule Ar II (p 0.95) was
  shown "established" beside Ar I in an Ar-Ne-Kr-Xe-Hg arc, and Cr II
  (p 0.6) beside Cr I in an iron hollow-cathode lamp;
* the pooled class is "established" only when one stage is established on
  its own evidence; pooling alone raises to "probable" at most. Why (stop
  24, with Fisher's method; kept with Simes' as a second guard against the
  same dependence): on 432 invented lamp
  spectra drawn afresh (``benchmarks/lamp_gases.py``, data version
  2026.12.4) two absent elements were "established" by pooling alone: Nd
  (Nd II "probable", k 21 of 32 at a hit chance of 0.27, closeness 0.19;
  Nd I at p 0.008 with closeness 0.99, i.e. its peaks anywhere in their
  windows) in a five-gas lamp at R 1000, and Ce (Ce II "probable" on 43 of
  53 groups at a hit chance of 0.61; Ce I p 0.02) in a saturated one at
  R 2000. With this rule both stayed "probable", and no gas's class, no
  emission mixture and no real spectrum changed (same runs).

The pooled figures are reported per species (``pooled_with``,
``pooled_evidence_dex``), and a raised stage keeps the class of its own
evidence (``own_verdict``), so the raise is visible and can be checked: the
faces mark such a class and name the stages pooled
(:func:`workbench.matching.presentation.verdict_basis`). Before, a raised
stage showed its own small net evidence beside a class it had not earned
alone (Ca I "established" at 0.7 dex beside Ca II), with nothing to say why.
"""

from __future__ import annotations

import math
from collections import defaultdict

from workbench.matching.chance import sidak_corrected, simes_combined
from workbench.matching.evidence import EvidencePass
from workbench.matching.prior_test import PRIOR_DATA_P, prior_capped
from workbench.matching.scoring import SpeciesEvidence, class_level, score_for

__all__ = ["pool_ion_stages"]


def pool_ion_stages(ev_pass: EvidencePass) -> None:
    """Raise ion stages of one element to their pooled class (in place; see module doc)."""
    by_element: dict[str, list[SpeciesEvidence]] = defaultdict(list)
    for ev in ev_pass.evidence.values():
        if ev.ion is not None:
            by_element[ev.element].append(ev)
    n_elements = max(1, len(by_element))
    for stages in by_element.values():
        seen = [ev for ev in stages if ev.n_groups_counted >= 1 and ev.n_groups_matched >= 1]
        if len(seen) < 2:
            continue
        p = simes_combined([ev.chance_probability for ev in seen])
        p_corr = sidak_corrected(p, n_elements)
        e = -math.log10(max(p_corr, 1e-300))
        e += sum(ev.missing_penalty_dex for ev in seen) + max(ev.prior_dex for ev in seen)
        k = sum(ev.n_groups_counted for ev in seen)
        unique = sum(ev.n_unique_peaks for ev in seen)
        level = class_level(e, k, unique, all(ev.missing_evidence for ev in seen))
        level = prior_capped(level, max(ev.prior_dex for ev in seen), p)
        if level >= 3 and max(ev.level for ev in seen) < 3:
            # The top class rests on one stage's own evidence (module docstring).
            level = 2
        names = [ev.label for ev in seen]
        for ev in seen:
            ev.pooled_with = [n for n in names if n != ev.label]
            ev.pooled_evidence_dex = e
            if level > ev.level and ev.chance_probability <= PRIOR_DATA_P:
                if ev.own_level is None:
                    ev.own_level = ev.level
                ev.level = level
                ev.score = max(ev.score, score_for(e))
