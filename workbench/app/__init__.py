"""Streamlit front end: cases, custody, measurements, line matching, findings, comparison.

The pages (``page_*.py``, registered by ``main.py`` with ``st.navigation``)
only call library functions, through the thin glue in
:mod:`workbench.app._services`. :func:`launch` starts the app on the loopback
interface (``workbench app``); :func:`decimate_minmax` thins long spectra for
display only. Importing this package does not import Streamlit.
"""

from workbench.app._display import decimate_minmax
from workbench.app.launch import MAIN_SCRIPT, app_command, launch

__all__ = ["MAIN_SCRIPT", "app_command", "decimate_minmax", "launch"]
