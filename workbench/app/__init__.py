"""Streamlit front end: cases, custody, measurements, line matching, findings, comparison.

The pages (``page_*.py``, registered by ``main.py`` with ``st.navigation``)
only call library functions. Each concern has its module: ``inputs`` (the one
reader call, peak-table edits), ``runs`` (settings, bounds, a worker process
per engine run), ``store_access`` (what pages need from the case store),
``forms`` (typed text to library values), ``figures`` (plotly figures) and
``_ui`` (Streamlit helpers); a match result is shaped for display by
:mod:`workbench.matching.presentation`. :func:`launch` starts the app on the loopback
interface (``workbench app``); :func:`decimate_minmax` thins long spectra for
display only. Importing this package does not import Streamlit.
"""

from workbench.app.figures import decimate_minmax
from workbench.app.launch import MAIN_SCRIPT, app_command, launch

__all__ = ["MAIN_SCRIPT", "app_command", "decimate_minmax", "launch"]
