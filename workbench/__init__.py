"""Line-matching workbench for element identification from line spectra.

The package is one core with thin faces: physics (``workbench.physics``),
reference data (``workbench.refdata``), input readers (``workbench.io``), peak
finding (``workbench.peaks``), matching (``workbench.matching``), the case-file
store (``workbench.casefile``), findings sheets (``workbench.findings``) and
questioned-vs-known comparison (``workbench.compare``). The CLI
(``workbench.cli``) and the Streamlit app (``workbench.app``) only call these.
"""

from __future__ import annotations

__all__ = ["__version__"]

__version__ = "0.1.0"
