"""Input readers: peak lists and spectra (:data:`INPUT_FORMATS`).

:func:`read_peak_list`, :func:`read_spectrum` and :func:`read_any` take a path,
the file's bytes or pasted text and return a
:class:`~workbench.datamodel.PeakList` or :class:`~workbench.datamodel.Spectrum`
in canonical units (nm with an explicit medium, or eV). :func:`sniff` says
what would be done without converting. Columns are found by fuzzy header
matching (:mod:`workbench.io.columns`); the bulk of a delimited file is
parsed by polars in one call after sniffing its head
(:mod:`workbench.io.fastcsv`); JCAMP-DX is decoded by our own parser
(:mod:`workbench.io.jcamp`). Every reader takes an optional
``progress(fraction, message)`` callable.
"""

from workbench.io.columns import check_unit_plausibility, map_columns, parse_header
from workbench.io.jcamp import JcampBlock, parse_jcamp
from workbench.io.readers import (
    INPUT_FORMATS,
    MAX_ABS_VALUE,
    Progress,
    parse_block_choice,
    read_any,
    read_peak_list,
    read_spectrum,
    sniff,
)
from workbench.io.source import DEFAULT_MAX_BYTES, decode_text, load_source

__all__ = [
    "DEFAULT_MAX_BYTES",
    "INPUT_FORMATS",
    "MAX_ABS_VALUE",
    "JcampBlock",
    "Progress",
    "check_unit_plausibility",
    "decode_text",
    "load_source",
    "map_columns",
    "parse_block_choice",
    "parse_header",
    "parse_jcamp",
    "read_any",
    "read_peak_list",
    "read_spectrum",
    "sniff",
]
