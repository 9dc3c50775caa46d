"""Matching engine: observed line lists against reference sets, with evidence and warnings.

Entry points: :func:`match_peaks` (a :class:`~workbench.datamodel.PeakList`
against loaded reference sets) and :func:`analyse_input` (a file or pasted
text: reads it, finds peaks in a raw spectrum, matches). The verdict classes
and their rules are in :mod:`workbench.matching.scoring`; the JSON record in
:mod:`workbench.matching.report`.
"""

from workbench.matching.analyse import AnalysisOutcome, analyse_input
from workbench.matching.engine import MatchParameters, MatchResult, build_index, match_peaks
from workbench.matching.report import SCHEMA_VERSION, build_report, result_json
from workbench.matching.scoring import VERDICTS
from workbench.matching.textsummary import summary_text
from workbench.matching.tolerance import ToleranceSpec

__all__ = [
    "SCHEMA_VERSION",
    "VERDICTS",
    "AnalysisOutcome",
    "MatchParameters",
    "MatchResult",
    "ToleranceSpec",
    "analyse_input",
    "build_index",
    "build_report",
    "match_peaks",
    "result_json",
    "summary_text",
]
